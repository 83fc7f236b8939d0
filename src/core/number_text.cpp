#include "plumb/number_text.hpp"

#include <cmath>
#include <cstdio>

namespace plumb {
namespace {

// printf with one precision argument; "-0.0000" loses its sign.
std::string format_number(const char* format, int precision, double x) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, format, precision, x);
  std::string s = buffer;
  if (!s.empty() && s[0] == '-' && s.find_first_not_of("0.", 1) == std::string::npos) s.erase(0, 1);
  return s;
}

}  // namespace

std::string fixed_text(double x, int decimals) {
  if (!std::isfinite(x)) return "n/a";
  return format_number("%.*f", decimals, x);
}

std::string metric_text(double x) {
  if (!std::isfinite(x)) return "n/a";
  if (x != 0.0 && std::fabs(x) < 1e-3) return format_number("%.*e", 2, x);
  return fixed_text(x, 4);
}

std::string stat_text(double x) { return fixed_text(x, 2); }

std::string p_value_text(double p) {
  if (!std::isfinite(p)) return "n/a";
  if (p >= p_value_floor) return fixed_text(p, 4);
  if (p > 0.0) return format_number("%.*e", 1, p);
  return "<1e-300";  // underflowed: smaller than any double we could print
}

}  // namespace plumb
