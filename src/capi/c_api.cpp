// The C interface (include/plumb/c.h): a thin shell over load_artifact and
// CalibrationMap::map that turns every exception into a return value and a
// per-thread message.
#include "plumb/c.h"

#include <cstring>
#include <exception>
#include <new>
#include <string>

#include "capi/map_scores.hpp"
#include "plumb/io/artifact.hpp"
#include "plumb/io/class_artifact.hpp"
#include "plumb/io/class_input.hpp"
#include "plumb/error.hpp"
#include "plumb/version.hpp"

struct plumb_map {
  plumb::Artifact artifact;
  std::string kind;
  std::string scale;
};

struct plumb_class_map {
  plumb::ClassArtifact artifact;
  std::string kind;
  std::string scale;
  double sum_tolerance;
};

namespace {

// Per thread, so that callers on several threads each read their own
// failure (c.h, "Thread safety").
thread_local std::string last_error;
thread_local int last_error_code = 0;

void fail(const plumb::Error& e) noexcept {
  try {
    last_error = plumb::format_error(e);
  } catch (...) {
    last_error.clear();
  }
  last_error_code = e.exit_code();
}

void fail(int code, const char* message) noexcept {
  try {
    last_error = message;
  } catch (...) {
    last_error.clear();
  }
  last_error_code = code;
}

// Runs `body`, turning what it throws into the thread's last error; returns
// the failure's exit code, 0 when it returned normally.
template <class Body>
int guarded(Body&& body) noexcept {
  try {
    body();
    return 0;
  } catch (const plumb::Error& e) {
    fail(e);
  } catch (const std::bad_alloc&) {
    fail(static_cast<int>(plumb::ErrorKind::internal), "out of memory");
  } catch (const std::exception& e) {
    fail(static_cast<int>(plumb::ErrorKind::internal), e.what());
  } catch (...) {
    fail(static_cast<int>(plumb::ErrorKind::internal), "unknown internal error");
  }
  return last_error_code;
}

plumb_map* wrap(plumb::Artifact artifact) {
  auto* m = new plumb_map{std::move(artifact), {}, {}};
  m->kind = std::string(m->artifact.map->kind());
  m->scale = std::string(plumb::to_string(m->artifact.map->scale()));
  return m;
}

plumb_class_map* wrap_classes(plumb::ClassArtifact artifact) {
  auto* m = new plumb_class_map{std::move(artifact), {}, {}, plumb::io::default_sum_tolerance};
  m->kind = std::string(m->artifact.map->kind());
  m->scale = std::string(plumb::to_string(m->artifact.map->scale()));
  m->sum_tolerance = plumb::embed::class_sum_tolerance(m->artifact);
  return m;
}

}  // namespace

extern "C" {

const char* plumb_version(void) { return plumb::version_string; }

plumb_map* plumb_map_load(const char* path) {
  plumb_map* result = nullptr;
  if (path == nullptr) {
    fail(static_cast<int>(plumb::ErrorKind::usage), "plumb_map_load: the path is NULL");
    return nullptr;
  }
  guarded([&] { result = wrap(plumb::load_artifact(path)); });
  return result;
}

plumb_map* plumb_map_from_text(const char* text, size_t length, const char* where) {
  plumb_map* result = nullptr;
  if (text == nullptr && length > 0) {
    fail(static_cast<int>(plumb::ErrorKind::usage), "plumb_map_from_text: the text is NULL");
    return nullptr;
  }
  guarded([&] {
    result = wrap(plumb::artifact_from_text(std::string(text == nullptr ? "" : text, length),
                                            where == nullptr ? "<memory>" : where));
  });
  return result;
}

void plumb_map_free(plumb_map* map) { delete map; }

int plumb_map_apply(const plumb_map* map, const double* scores, double* out, size_t count) {
  if (map == nullptr || ((scores == nullptr || out == nullptr) && count > 0)) {
    fail(static_cast<int>(plumb::ErrorKind::usage), "plumb_map_apply: a NULL map or buffer");
    return static_cast<int>(plumb::ErrorKind::usage);
  }
  return guarded([&] {
    const plumb::CalibrationMap& m = *map->artifact.map;
    const plumb::Scale scale = m.scale();
    for (size_t i = 0; i < count; ++i) {
      const double s = scores[i];
      if (!plumb::embed::admissible(s, scale))
        throw plumb::embed::score_refusal("index " + std::to_string(i), s, scale);
      out[i] = m.map(s).probability;
    }
  });
}

const char* plumb_map_kind(const plumb_map* map) { return map == nullptr ? nullptr : map->kind.c_str(); }
const char* plumb_map_scale(const plumb_map* map) { return map == nullptr ? nullptr : map->scale.c_str(); }
const char* plumb_map_score_column(const plumb_map* map) {
  return map == nullptr ? nullptr : map->artifact.score_column.c_str();
}

int plumb_map_fitted_range(const plumb_map* map, double* score_min, double* score_max) {
  if (map == nullptr || score_min == nullptr || score_max == nullptr) {
    fail(static_cast<int>(plumb::ErrorKind::usage), "plumb_map_fitted_range: a NULL argument");
    return static_cast<int>(plumb::ErrorKind::usage);
  }
  *score_min = map->artifact.provenance.score_min;
  *score_max = map->artifact.provenance.score_max;
  return 0;
}

plumb_class_map* plumb_class_map_load(const char* path) {
  plumb_class_map* result = nullptr;
  if (path == nullptr) {
    fail(static_cast<int>(plumb::ErrorKind::usage), "plumb_class_map_load: the path is NULL");
    return nullptr;
  }
  guarded([&] { result = wrap_classes(plumb::embed::load_class_artifact(path)); });
  return result;
}

plumb_class_map* plumb_class_map_from_text(const char* text, size_t length, const char* where) {
  plumb_class_map* result = nullptr;
  if (text == nullptr && length > 0) {
    fail(static_cast<int>(plumb::ErrorKind::usage), "plumb_class_map_from_text: the text is NULL");
    return nullptr;
  }
  guarded([&] {
    result = wrap_classes(plumb::class_artifact_from_text(std::string(text == nullptr ? "" : text, length),
                                                          where == nullptr ? "<memory>" : where));
  });
  return result;
}

void plumb_class_map_free(plumb_class_map* map) { delete map; }

size_t plumb_class_map_classes(const plumb_class_map* map) { return map == nullptr ? 0 : map->artifact.map->k(); }

const char* plumb_class_map_class(const plumb_class_map* map, size_t j) {
  if (map == nullptr || j >= map->artifact.map->k()) return nullptr;
  return map->artifact.map->classes()[j].c_str();
}

const char* plumb_class_map_score_column(const plumb_class_map* map, size_t j) {
  if (map == nullptr || j >= map->artifact.score_columns.size()) return nullptr;
  return map->artifact.score_columns[j].c_str();
}

const char* plumb_class_map_kind(const plumb_class_map* map) { return map == nullptr ? nullptr : map->kind.c_str(); }
const char* plumb_class_map_scale(const plumb_class_map* map) {
  return map == nullptr ? nullptr : map->scale.c_str();
}

int plumb_class_map_apply(const plumb_class_map* map, const double* scores, double* out, size_t rows) {
  if (map == nullptr || ((scores == nullptr || out == nullptr) && rows > 0)) {
    fail(static_cast<int>(plumb::ErrorKind::usage), "plumb_class_map_apply: a NULL map or buffer");
    return static_cast<int>(plumb::ErrorKind::usage);
  }
  return guarded([&] { plumb::embed::map_class_rows(*map->artifact.map, map->sum_tolerance, scores, out, rows); });
}

const char* plumb_last_error(void) { return last_error.c_str(); }
int plumb_last_error_code(void) { return last_error_code; }

}  // extern "C"
