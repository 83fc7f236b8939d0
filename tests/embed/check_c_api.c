/* The C API (include/plumb/c.h) driven from C, as a caller through an FFI
 * would use it. Compiled as C (C11), linked against libplumb_c only.
 *
 *   check_c_api map MAP SCORES EXPECTED   map every score of SCORES (one
 *       decimal per line) and compare with EXPECTED (the probabilities
 *       `plumb apply` wrote, one per line) bit for bit; then map the buffer
 *       in place and compare again.
 *   check_c_api errors MAP                the refusals: a missing file, a
 *       document that is not an artifact, MAP with one parameter changed (its
 *       integrity hash no longer matches), NaN and out-of-range scores, NULL
 *       arguments; each must fail with plumb's exit code and message.
 *   check_c_api threads MAP SCORES EXPECTED   four threads map the scores
 *       with one shared map at once, each checking apply's bits; each then
 *       fails on a score of its own and must read its own message from
 *       plumb_last_error, not another thread's.
 *   check_c_api classes MAP SCORES EXPECTED   a multi-class map: SCORES and
 *       EXPECTED hold rows x K numbers, row-major, one per line; map them all
 *       and compare bit for bit, again in place, then with four threads
 *       sharing the map.
 *   check_c_api class_errors MAP BINARY_MAP   the multi-class refusals: a
 *       refused row mid-buffer (rows before it written, the rest untouched),
 *       NULL arguments, a binary map given to the multi-class loader.
 *
 * Prints one line per failure and "N checks, M failed"; exits 1 on any. */
/* pthread barriers are POSIX, outside strict C11. */
#define _POSIX_C_SOURCE 200809L

#include <plumb/c.h>

#include <pthread.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int checks = 0, failures = 0;

static void check(int ok, const char* what, const char* detail) {
  ++checks;
  if (!ok) {
    ++failures;
    printf("FAILED: %s%s%s\n", what, detail ? ": " : "", detail ? detail : "");
  }
}

static char* read_file(const char* path, size_t* length) {
  FILE* f = fopen(path, "rb");
  if (!f) {
    printf("cannot open %s\n", path);
    exit(2);
  }
  size_t cap = 1 << 16, n = 0;
  char* text = malloc(cap + 1);
  size_t got;
  while ((got = fread(text + n, 1, cap - n, f)) > 0) {
    n += got;
    if (n == cap) text = realloc(text, (cap *= 2) + 1);
  }
  fclose(f);
  text[n] = '\0';
  *length = n;
  return text;
}

/* The numbers of a file of one decimal per line, read with strtod (correctly
 * rounded, as plumb's reader and Python's float() are). */
static double* read_numbers(const char* path, size_t* count) {
  size_t length;
  char* text = read_file(path, &length);
  size_t cap = 1024, n = 0;
  double* values = malloc(cap * sizeof *values);
  char* p = text;
  while (*p) {
    char* end;
    const double v = strtod(p, &end);
    if (end == p) {
      printf("%s: not a number at byte %zu\n", path, (size_t)(p - text));
      exit(2);
    }
    if (n == cap) values = realloc(values, (cap *= 2) * sizeof *values);
    values[n++] = v;
    p = end;
    while (*p == '\n' || *p == '\r') ++p;
  }
  free(text);
  *count = n;
  return values;
}

static int same_bits(double a, double b) { return memcmp(&a, &b, sizeof a) == 0; }

static int run_map(const char* map_path, const char* scores_path, const char* expected_path) {
  size_t n, m;
  double* scores = read_numbers(scores_path, &n);
  double* expected = read_numbers(expected_path, &m);
  check(n == m && n > 0, "as many expected probabilities as scores", NULL);
  plumb_map* map = plumb_map_load(map_path);
  check(map != NULL, "load", plumb_last_error());
  if (!map) return 1;
  double* out = malloc(n * sizeof *out);
  check(plumb_map_apply(map, scores, out, n) == 0, "apply", plumb_last_error());
  size_t differ = 0, first = 0;
  for (size_t i = 0; i < n && i < m; ++i)
    if (!same_bits(out[i], expected[i]) && differ++ == 0) first = i;
  char detail[160];
  snprintf(detail, sizeof detail, "%zu of %zu differ, first at %zu: %.17g, apply wrote %.17g", differ, n, first,
           differ ? out[first] : 0.0, differ ? expected[first] : 0.0);
  check(differ == 0, "bit-identical to plumb apply", detail);
  /* In place: out may be the scores buffer itself. */
  check(plumb_map_apply(map, scores, scores, n) == 0, "apply in place", plumb_last_error());
  check(memcmp(scores, out, n * sizeof *out) == 0, "in place gives the same bits", NULL);
  double lo = 1, hi = 0;
  check(plumb_map_fitted_range(map, &lo, &hi) == 0 && lo <= hi, "fitted range", NULL);
  check(plumb_map_kind(map) != NULL && strlen(plumb_map_kind(map)) > 0, "kind", NULL);
  printf("%s: %s map on %s scores of '%s', %zu scores\n", map_path, plumb_map_kind(map), plumb_map_scale(map),
         plumb_map_score_column(map), n);
  plumb_map_free(map);
  free(scores);
  free(expected);
  free(out);
  return 0;
}

static int contains(const char* text, const char* part) { return text && strstr(text, part) != NULL; }

static void run_errors(const char* map_path) {
  check(strcmp(plumb_last_error(), "") == 0 && plumb_last_error_code() == 0, "no error before any failure", NULL);
  check(plumb_map_load("no-such-dir/none.map.json") == NULL, "a missing file gives NULL", NULL);
  check(plumb_last_error_code() == 5 && contains(plumb_last_error(), "no-such-dir/none.map.json"),
        "a missing file: I/O error (5) naming the file", plumb_last_error());

  const char* not_artifact = "{\"format\": \"something-else\"}";
  check(plumb_map_from_text(not_artifact, strlen(not_artifact), "other.json") == NULL, "another format gives NULL",
        NULL);
  check(plumb_last_error_code() == 4 && contains(plumb_last_error(), "other.json"),
        "another format: artifact error (4) naming the document", plumb_last_error());
  check(plumb_map_from_text("{\"format\": ", 11, NULL) == NULL && plumb_last_error_code() == 4 &&
            contains(plumb_last_error(), "<memory>"),
        "truncated JSON: artifact error (4) naming <memory>", plumb_last_error());

  /* The artifact with its score_max changed: the integrity hash no longer
   * matches, and plumb apply refuses such a file too. */
  size_t length;
  char* text = read_file(map_path, &length);
  char* at = strstr(text, "\"score_max\": ");
  check(at != NULL, "the artifact records score_max", NULL);
  if (at) {
    at += strlen("\"score_max\": ");
    *at = *at == '9' ? '8' : '9';
    check(plumb_map_from_text(text, length, "tampered.json") == NULL, "a tampered artifact gives NULL", NULL);
    check(plumb_last_error_code() == 4 && contains(plumb_last_error(), "tampered.json") &&
              contains(plumb_last_error(), "integrity"),
          "a tampered artifact: artifact error (4) on its integrity hash", plumb_last_error());
  }
  free(text);

  plumb_map* map = plumb_map_load(map_path);
  check(map != NULL, "load", plumb_last_error());
  if (!map) return;
  const int probability = strcmp(plumb_map_scale(map), "probability") == 0;
  double scores[4] = {0.25, 0.5, 0.0, 0.75};
  double out[4] = {-1, -1, -1, -1};
  scores[2] = strtod("nan", NULL);
  check(plumb_map_apply(map, scores, out, 4) == 3, "NaN: bad input (3)", NULL);
  check(contains(plumb_last_error(), "index 2") && contains(plumb_last_error(), "not a number"),
        "NaN: the message names the index", plumb_last_error());
  check(out[0] >= 0 && out[1] >= 0 && out[2] == -1 && out[3] == -1,
        "NaN: the scores before it are mapped, the rest left as they were", NULL);
  scores[2] = strtod("inf", NULL);
  check(plumb_map_apply(map, scores, out, 4) == 3 && contains(plumb_last_error(), "index 2 is infinite"),
        "infinity: bad input (3) naming the index", plumb_last_error());
  if (probability) {
    scores[2] = 1.5;
    check(plumb_map_apply(map, scores, out, 4) == 3 && contains(plumb_last_error(), "index 2 lies outside [0, 1]") &&
              contains(plumb_last_error(), "got '1.5'"),
          "1.5 on a probability map: bad input (3) with the value", plumb_last_error());
  }
  check(plumb_map_apply(NULL, scores, out, 4) == 2, "a NULL map: usage (2)", NULL);
  check(plumb_map_apply(map, NULL, out, 4) == 2, "a NULL buffer: usage (2)", NULL);
  check(plumb_map_apply(map, NULL, NULL, 0) == 0, "no scores, no buffers: nothing to do", plumb_last_error());
  check(plumb_map_load(NULL) == NULL && plumb_last_error_code() == 2, "a NULL path: usage (2)", NULL);
  check(plumb_map_kind(NULL) == NULL, "the kind of a NULL map is NULL", NULL);
  plumb_map_free(NULL);
  plumb_map_free(map);
  check(strcmp(plumb_version(), "") != 0, "a version", NULL);
}

enum { thread_count = 4 };

struct thread_job {
  const plumb_map* map;
  const double* scores;
  const double* expected;
  size_t n;
  int index;                /* this thread's number: its bad score goes at this index */
  pthread_barrier_t* barrier;
  size_t differ;            /* results, read after join */
  int refused, own_message;
  char message[256];
};

static void* map_concurrently(void* arg) {
  struct thread_job* job = arg;
  double* out = malloc(job->n * sizeof *out);
  pthread_barrier_wait(job->barrier);
  for (int round = 0; round < 5; ++round) {
    if (plumb_map_apply(job->map, job->scores, out, job->n) != 0) break;
    for (size_t i = 0; i < job->n; ++i) job->differ += !same_bits(out[i], job->expected[i]);
  }
  /* Each thread fails at its own index; all fail before any reads back. */
  double bad[thread_count];
  for (int i = 0; i < thread_count; ++i) bad[i] = 0.5;
  bad[job->index] = strtod("nan", NULL);
  job->refused = plumb_map_apply(job->map, bad, bad, thread_count) == 3;
  pthread_barrier_wait(job->barrier);
  char own[32];
  snprintf(own, sizeof own, "index %d ", job->index);
  job->own_message = strstr(plumb_last_error(), own) != NULL;
  snprintf(job->message, sizeof job->message, "%s", plumb_last_error());
  free(out);
  return NULL;
}

static void run_threads(const char* map_path, const char* scores_path, const char* expected_path) {
  size_t n, m;
  double* scores = read_numbers(scores_path, &n);
  double* expected = read_numbers(expected_path, &m);
  check(n == m && n > 0, "as many expected probabilities as scores", NULL);
  plumb_map* map = plumb_map_load(map_path);
  check(map != NULL, "load", plumb_last_error());
  if (!map || n != m) return;
  pthread_barrier_t barrier;
  pthread_barrier_init(&barrier, NULL, thread_count);
  pthread_t threads[thread_count];
  struct thread_job jobs[thread_count];
  for (int t = 0; t < thread_count; ++t) {
    jobs[t] = (struct thread_job){map, scores, expected, n, t, &barrier, 0, 0, 0, {0}};
    pthread_create(&threads[t], NULL, map_concurrently, &jobs[t]);
  }
  for (int t = 0; t < thread_count; ++t) pthread_join(threads[t], NULL);
  for (int t = 0; t < thread_count; ++t) {
    check(jobs[t].differ == 0, "a thread's probabilities are apply's bits", NULL);
    check(jobs[t].refused, "a thread's NaN is refused", NULL);
    check(jobs[t].own_message, "a thread reads its own last error", jobs[t].message);
  }
  pthread_barrier_destroy(&barrier);
  plumb_map_free(map);
  free(scores);
  free(expected);
}

struct class_job {
  const plumb_class_map* map;
  const double* scores;
  const double* expected;
  size_t rows, k;
  pthread_barrier_t* barrier;
  size_t differ;
  int rc;
};

static void* class_concurrently(void* arg) {
  struct class_job* job = arg;
  double* out = malloc(job->rows * job->k * sizeof *out);
  pthread_barrier_wait(job->barrier);
  for (int round = 0; round < 3 && job->rc == 0; ++round) {
    job->rc = plumb_class_map_apply(job->map, job->scores, out, job->rows);
    for (size_t i = 0; i < job->rows * job->k; ++i) job->differ += !same_bits(out[i], job->expected[i]);
  }
  free(out);
  return NULL;
}

static void run_classes(const char* map_path, const char* scores_path, const char* expected_path) {
  size_t n, m;
  double* scores = read_numbers(scores_path, &n);
  double* expected = read_numbers(expected_path, &m);
  check(n == m && n > 0, "as many expected probabilities as scores", NULL);
  plumb_class_map* map = plumb_class_map_load(map_path);
  check(map != NULL, "load", plumb_last_error());
  if (!map || n != m) return;
  const size_t k = plumb_class_map_classes(map);
  check(k >= 2 && n % k == 0, "rows of K scores", NULL);
  const size_t rows = n / k;
  double* out = malloc(n * sizeof *out);
  check(plumb_class_map_apply(map, scores, out, rows) == 0, "apply", plumb_last_error());
  size_t differ = 0, first = 0;
  for (size_t i = 0; i < n; ++i)
    if (!same_bits(out[i], expected[i]) && differ++ == 0) first = i;
  char detail[200];
  snprintf(detail, sizeof detail, "%zu of %zu differ, first at row %zu class %zu: %.17g, apply wrote %.17g", differ, n,
           first / k, first % k, differ ? out[first] : 0.0, differ ? expected[first] : 0.0);
  check(differ == 0, "bit-identical to plumb apply --scores", detail);
  /* In place: out may be the scores buffer itself. */
  double* copy = malloc(n * sizeof *copy);
  memcpy(copy, scores, n * sizeof *copy);
  check(plumb_class_map_apply(map, copy, copy, rows) == 0, "apply in place", plumb_last_error());
  check(memcmp(copy, out, n * sizeof *out) == 0, "in place gives the same bits", NULL);
  /* Four threads share the map. */
  pthread_barrier_t barrier;
  pthread_barrier_init(&barrier, NULL, thread_count);
  pthread_t threads[thread_count];
  struct class_job jobs[thread_count];
  for (int t = 0; t < thread_count; ++t) {
    jobs[t] = (struct class_job){map, scores, expected, rows, k, &barrier, 0, 0};
    pthread_create(&threads[t], NULL, class_concurrently, &jobs[t]);
  }
  for (int t = 0; t < thread_count; ++t) pthread_join(threads[t], NULL);
  for (int t = 0; t < thread_count; ++t)
    check(jobs[t].rc == 0 && jobs[t].differ == 0, "a thread's probabilities are apply's bits", NULL);
  pthread_barrier_destroy(&barrier);
  check(plumb_class_map_class(map, 0) != NULL && plumb_class_map_class(map, k) == NULL, "class names, NULL past K",
        NULL);
  check(plumb_class_map_score_column(map, k - 1) != NULL && plumb_class_map_score_column(map, k) == NULL,
        "score columns, NULL past K", NULL);
  printf("%s: %s map on %s scores of %zu classes (%s ... %s), %zu rows\n", map_path, plumb_class_map_kind(map),
         plumb_class_map_scale(map), k, plumb_class_map_class(map, 0), plumb_class_map_class(map, k - 1), rows);
  plumb_class_map_free(map);
  free(scores);
  free(expected);
  free(out);
  free(copy);
}

static void run_class_errors(const char* map_path, const char* binary_path) {
  check(plumb_class_map_load(binary_path) == NULL && plumb_last_error_code() == 4 &&
            contains(plumb_last_error(), "binary map"),
        "a binary map's artifact: artifact error (4)", plumb_last_error());
  check(plumb_map_load(map_path) == NULL && plumb_last_error_code() == 4 && contains(plumb_last_error(), "multi-class"),
        "the binary loader refuses a multi-class map (4)", plumb_last_error());
  check(plumb_class_map_load(NULL) == NULL && plumb_last_error_code() == 2, "a NULL path: usage (2)", NULL);
  check(plumb_class_map_from_text("{", 1, NULL) == NULL && plumb_last_error_code() == 4 &&
            contains(plumb_last_error(), "<memory>"),
        "truncated JSON: artifact error (4) naming <memory>", plumb_last_error());
  plumb_class_map* map = plumb_class_map_load(map_path);
  check(map != NULL, "load", plumb_last_error());
  if (!map) return;
  const size_t k = plumb_class_map_classes(map);
  const int probability = strcmp(plumb_class_map_scale(map), "probability") == 0;
  double* scores = malloc(3 * k * sizeof *scores);
  double* out = malloc(3 * k * sizeof *out);
  for (size_t i = 0; i < 3 * k; ++i) {
    scores[i] = (i % k == 0) ? 1.0 : 0.0;
    out[i] = -1;
  }
  scores[k + 1] = strtod("nan", NULL); /* row 1, class 1 */
  check(plumb_class_map_apply(map, scores, out, 3) == 3, "NaN: bad input (3)", plumb_last_error());
  check(contains(plumb_last_error(), "row 1, class '") && contains(plumb_last_error(), "nan"),
        "NaN: the message names the row, the class and the value", plumb_last_error());
  check(out[0] >= 0 && out[k] == -1 && out[2 * k] == -1, "rows before it mapped, the rest left as they were", NULL);
  scores[k + 1] = strtod("inf", NULL);
  check(plumb_class_map_apply(map, scores, out, 3) == 3 && contains(plumb_last_error(), "row 1"),
        "infinity: bad input (3) naming the row", plumb_last_error());
  if (probability) {
    scores[k + 1] = 0.5; /* row 1 sums to 1.5 */
    check(plumb_class_map_apply(map, scores, out, 3) == 3 && contains(plumb_last_error(), "row 1: the row's") &&
              contains(plumb_last_error(), "sum to 1.5"),
          "a row summing to 1.5: bad input (3)", plumb_last_error());
  }
  check(plumb_class_map_apply(NULL, scores, out, 3) == 2, "a NULL map: usage (2)", NULL);
  check(plumb_class_map_apply(map, NULL, out, 3) == 2, "a NULL buffer: usage (2)", NULL);
  check(plumb_class_map_apply(map, NULL, NULL, 0) == 0, "no rows, no buffers: nothing to do", plumb_last_error());
  check(plumb_class_map_classes(NULL) == 0 && plumb_class_map_kind(NULL) == NULL, "a NULL map's accessors", NULL);
  plumb_class_map_free(NULL);
  plumb_class_map_free(map);
  free(scores);
  free(out);
}

int main(int argc, char** argv) {
  if (argc == 5 && strcmp(argv[1], "map") == 0) {
    run_map(argv[2], argv[3], argv[4]);
  } else if (argc == 5 && strcmp(argv[1], "threads") == 0) {
    run_threads(argv[2], argv[3], argv[4]);
  } else if (argc == 3 && strcmp(argv[1], "errors") == 0) {
    run_errors(argv[2]);
  } else if (argc == 5 && strcmp(argv[1], "classes") == 0) {
    run_classes(argv[2], argv[3], argv[4]);
  } else if (argc == 4 && strcmp(argv[1], "class_errors") == 0) {
    run_class_errors(argv[2], argv[3]);
  } else {
    fprintf(stderr, "usage: check_c_api map|threads|classes MAP SCORES EXPECTED | errors MAP | class_errors MAP BINARY_MAP\n");
    return 2;
  }
  printf("%d checks, %d failed\n", checks, failures);
  return failures ? 1 : 0;
}
