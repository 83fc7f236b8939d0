/* The C interface of plumb: load a map artifact and map scores with exactly
 * the numbers `plumb apply` writes, from C or from any language with a C
 * foreign-function interface (Go's cgo, Rust, R's .Call, Java's FFM or JNA).
 *
 * Link with libplumb_c (a shared library; `-lplumb_c`). Every function is
 * declared here; nothing else of the library is exported.
 *
 * Thread safety:
 *   - plumb_map_load and plumb_map_from_text may be called from any number
 *     of threads at once; each returns a map of its own.
 *   - A loaded map is never changed by plumb_map_apply or the accessors, so
 *     one map may be used from many threads at once without a lock.
 *   - plumb_map_free must not run while another thread still uses the map.
 *   - The last error is kept per thread: plumb_last_error describes the last
 *     failing call made on the calling thread.
 *
 * Errors: a failing call returns NULL (the loaders) or a nonzero plumb exit
 * code (plumb_map_apply: 3 for a bad score, as `plumb apply` exits), and
 * plumb_last_error then gives plumb's one-line message. No function prints,
 * exits or lets a C++ exception through. */
#ifndef PLUMB_C_H
#define PLUMB_C_H

#include <stddef.h>

#if defined(__GNUC__)
#define PLUMB_C_API __attribute__((visibility("default")))
#else
#define PLUMB_C_API
#endif

#ifdef __cplusplus
extern "C" {
#endif

/* A loaded map artifact. Opaque; free it with plumb_map_free. */
typedef struct plumb_map plumb_map;

/* The library's version, "0.1.0". Static storage. */
PLUMB_C_API const char* plumb_version(void);

/* Load and validate the map artifact at `path` (the checks of `plumb apply`:
 * format, version, every parameter, the integrity hash). Returns NULL on
 * failure (an unreadable file, a document that is not a valid artifact);
 * plumb_last_error then says why, naming the file. */
PLUMB_C_API plumb_map* plumb_map_load(const char* path);

/* As plumb_map_load, from the `length` bytes of an artifact's text in memory;
 * `where` names it in messages (NULL: "<memory>"). */
PLUMB_C_API plumb_map* plumb_map_from_text(const char* text, size_t length, const char* where);

/* Free a map from plumb_map_load or plumb_map_from_text. NULL is ignored. */
PLUMB_C_API void plumb_map_free(plumb_map* map);

/* Map `count` scores to probabilities: out[i] is the probability `plumb apply`
 * writes for scores[i] (the same double: its shortest text reads back to it).
 * `out` may be `scores` itself (mapping in place); otherwise the two must not
 * overlap. Returns 0 on success. A score that is not valid on the map's scale
 * (NaN or infinite; outside [0, 1] for a map of probability scores) stops the
 * call: the return value is 3, plumb_last_error names the first such index and
 * value, and out[0..index) hold their probabilities while the rest of `out` is
 * left as it was. A NULL map, or NULL buffers with a nonzero count, return 2. */
PLUMB_C_API int plumb_map_apply(const plumb_map* map, const double* scores, double* out, size_t count);

/* The map's kind ("isotonic", "platt", "beta", "temperature", "histogram",
 * "fold_average"), the scale of the scores it expects ("probability", "logit",
 * "margin") and the name of the score column it was fitted on. Valid as long
 * as the map is; NULL for a NULL map. */
PLUMB_C_API const char* plumb_map_kind(const plumb_map* map);
PLUMB_C_API const char* plumb_map_scale(const plumb_map* map);
PLUMB_C_API const char* plumb_map_score_column(const plumb_map* map);

/* The fitted score range (provenance score_min and score_max); scores
 * outside it are clamped by the piecewise kinds. 0 on success, 2 for a NULL
 * argument. */
PLUMB_C_API int plumb_map_fitted_range(const plumb_map* map, double* score_min, double* score_max);

/* ---- Multi-class maps (artifact format version 4: temperature, vector,
 * dirichlet, one_vs_rest). The same rules hold as for a binary map above:
 * the loaders may run on many threads at once; a loaded map is never
 * changed, so many threads may map with one at once; free it only when no
 * thread uses it; failures set the thread's last error. */

/* A loaded multi-class map artifact. Opaque; free it with
 * plumb_class_map_free. */
typedef struct plumb_class_map plumb_class_map;

/* Load and validate the multi-class map artifact at `path` (the checks of
 * `plumb apply`). Returns NULL on failure, with plumb_last_error naming the
 * file; a binary map's artifact is refused (exit code 4: use plumb_map_load). */
PLUMB_C_API plumb_class_map* plumb_class_map_load(const char* path);

/* As plumb_class_map_load, from an artifact's text in memory; `where` names
 * it in messages (NULL: "<memory>"). */
PLUMB_C_API plumb_class_map* plumb_class_map_from_text(const char* text, size_t length, const char* where);

/* Free a map from plumb_class_map_load or _from_text. NULL is ignored. */
PLUMB_C_API void plumb_class_map_free(plumb_class_map* map);

/* The number of classes K (0 for a NULL map), and class j's name and the
 * score column it was fitted on (NULL for a NULL map or j >= K). Valid as
 * long as the map is. */
PLUMB_C_API size_t plumb_class_map_classes(const plumb_class_map* map);
PLUMB_C_API const char* plumb_class_map_class(const plumb_class_map* map, size_t j);
PLUMB_C_API const char* plumb_class_map_score_column(const plumb_class_map* map, size_t j);

/* The map's kind ("temperature", "vector", "dirichlet", "one_vs_rest") and
 * the scale of its scores ("probability" or "logit"); NULL for a NULL map. */
PLUMB_C_API const char* plumb_class_map_kind(const plumb_class_map* map);
PLUMB_C_API const char* plumb_class_map_scale(const plumb_class_map* map);

/* Map `rows` rows of K scores, row-major (scores[r * K + j] is row r's score
 * of class j, in the map's class order), to rows x K probabilities in `out`
 * (row-major too): the doubles `plumb apply --scores` writes for those rows,
 * bit for bit. Mapped on the calling thread. `out` may be `scores` itself;
 * otherwise the two must not overlap. Returns 0 on success. A row apply
 * refuses (a logit not finite; a probability outside [0, 1] or not a
 * number, or a row whose sum is further from 1 than the artifact's sum
 * tolerance, 1e-3 unless fit was given --sum-tolerance) stops the call: the
 * return value is 3, plumb_last_error names the row, the class and the
 * value, rows before it hold their probabilities and the rest of `out` is
 * left as it was. A NULL map, or NULL buffers with rows > 0, return 2. */
PLUMB_C_API int plumb_class_map_apply(const plumb_class_map* map, const double* scores, double* out, size_t rows);

/* The message of the last failing call on this thread, one line as
 * `plumb` prints it after "plumb: " ("FILE:LINE:COL ...: what went wrong:
 * got 'VALUE'; expected ..."); "" when no call has failed on this thread.
 * Successful calls leave it as it was (as errno). Valid until the next
 * failing call on this thread. */
PLUMB_C_API const char* plumb_last_error(void);

/* The exit code `plumb` would give for that failure (2 usage, 3 bad input,
 * 4 bad artifact, 5 I/O, 1 internal), 0 when no call has failed. */
PLUMB_C_API int plumb_last_error_code(void);

#ifdef __cplusplus
}
#endif

#endif /* PLUMB_C_H */
