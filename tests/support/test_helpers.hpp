#pragma once
// Small helpers shared by the unit tests.
#include <cstddef>
#include <optional>
#include <random>

#include "plumb/error.hpp"

namespace plumb::test {

// Uniform on [0, 1) from the top 53 bits of one engine draw. Drawn by hand
// because the standard distributions differ between library vendors.
inline double uniform01(std::mt19937_64& g) { return static_cast<double>(g() >> 11) * 0x1.0p-53; }
// Integer in [0, k) (modulo bias is irrelevant for these tests).
inline std::size_t below(std::mt19937_64& g, std::size_t k) { return static_cast<std::size_t>(g() % k); }

// The kind of plumb::Error that f() throws, or nullopt when it throws none.
template <class F>
std::optional<ErrorKind> error_kind(F f) {
  try {
    f();
  } catch (const Error& e) {
    return e.kind();
  }
  return std::nullopt;
}

}  // namespace plumb::test
