/* Map scores with a plumb map artifact from C, through the C API
 * (include/plumb/c.h). Reads one score per line on standard input and
 * prints its probability with 17 significant digits, the text
 * `plumb apply --digits 17` writes.
 *
 *   cc -std=c11 map_scores.c -I PREFIX/include -L PREFIX/lib -lplumb_c -o map_scores
 *   cut -d, -f4 tonight.csv | tail -n +2 | ./map_scores late.map.json */
#include <plumb/c.h>

#include <stdio.h>
#include <stdlib.h>

int main(int argc, char** argv) {
  if (argc != 2) {
    fprintf(stderr, "usage: map_scores MAP.json < scores\n");
    return 2;
  }
  plumb_map* map = plumb_map_load(argv[1]);
  if (map == NULL) {
    fprintf(stderr, "map_scores: %s\n", plumb_last_error());
    return plumb_last_error_code();
  }
  /* Map in batches: one call per batch, as a service would per request. */
  enum { batch = 4096 };
  static double scores[batch];
  char line[128];
  size_t n = 0;
  int status = 0;
  for (int more = 1; more && status == 0;) {
    more = fgets(line, sizeof line, stdin) != NULL;
    if (more) scores[n++] = strtod(line, NULL);
    if (n == batch || (!more && n > 0)) {
      status = plumb_map_apply(map, scores, scores, n); /* in place */
      if (status != 0) {
        fprintf(stderr, "map_scores: %s\n", plumb_last_error());
        break;
      }
      for (size_t i = 0; i < n; ++i) printf("%.17g\n", scores[i]);
      n = 0;
    }
  }
  plumb_map_free(map);
  return status;
}
