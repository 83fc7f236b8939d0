#include "plumb/number_text.hpp"

#include <charconv>
#include <cmath>
#include <system_error>

namespace plumb {
namespace {

std::string without_negative_zero(std::string s) {
  // "-0.0000" says a sign the number does not have at this precision.
  if (!s.empty() && s[0] == '-' && s.find_first_not_of("0.", 1) == std::string::npos) s.erase(0, 1);
  return s;
}

// std::to_chars never reads the locale, unlike printf.
std::string chars(double x, std::chars_format format, int precision) {
  char buffer[512];  // fixed notation of 1e300 needs about 300 digits
  const auto [end, ec] = std::to_chars(buffer, buffer + sizeof buffer, x, format, precision);
  if (ec != std::errc{}) return std::string(not_a_number);
  return without_negative_zero(std::string(buffer, end));
}

// printf's %e writes at least two exponent digits ("9.9e-05"); to_chars
// agrees (C++17 [charconv.to.chars] follows printf), so nothing to mend.
std::string scientific(double x, int precision) { return chars(x, std::chars_format::scientific, precision); }

// A comma every three digits of the whole part of a plain decimal.
std::string group_thousands(const std::string& s) {
  const std::size_t sign = !s.empty() && (s[0] == '-' || s[0] == '+') ? 1 : 0;
  std::size_t end = s.find('.');
  if (end == std::string::npos) end = s.size();
  std::string out = s.substr(0, sign);
  for (std::size_t i = sign; i < end; ++i) {
    if (i > sign && (end - i) % 3 == 0) out += ',';
    out += s[i];
  }
  out += s.substr(end);
  return out;
}

}  // namespace

std::string fixed_text(double x, int decimals) {
  if (!std::isfinite(x)) return std::string(not_a_number);
  return chars(x, std::chars_format::fixed, decimals);
}

std::string probability_text(double p) { return fixed_text(p, 4); }

std::string difference_text(double d) {
  std::string s = fixed_text(d, 4);
  if (std::isfinite(d) && d > 0.0 && s.find_first_not_of("0.") != std::string::npos) s.insert(0, "+");
  return s;
}

std::string metric_text(double x) {
  if (!std::isfinite(x)) return std::string(not_a_number);
  if (x != 0.0 && std::fabs(x) < 1e-3) return scientific(x, 2);
  return fixed_text(x, 4);
}

std::string stat_text(double x) { return fixed_text(x, 2); }

std::string p_value_text(double p) {
  if (!std::isfinite(p)) return std::string(not_a_number);
  if (p >= p_value_floor) return fixed_text(p, 4);
  if (p > 0.0) return scientific(p, 1);
  return "<1e-300";  // underflowed: smaller than any double we could print
}

std::string interval_text(std::string_view lo, std::string_view hi) {
  std::string s = "[";
  s += lo;
  s += ", ";
  s += hi;
  s += "]";
  return s;
}

std::string range_text(std::string_view lo, std::string_view hi, bool unicode) {
  std::string s(lo);
  s += unicode ? "\u2013" : "-";
  s += hi;
  return s;
}

std::string count_text(std::uint64_t n) { return group_thousands(std::to_string(n)); }

std::string weight_text(double w) {
  if (!std::isfinite(w)) return std::string(not_a_number);
  const double a = std::fabs(w);
  if (w == std::floor(w) && a < 1e15) return group_thousands(chars(w, std::chars_format::fixed, 0));
  if (a >= 1.0) {
    // A sum of weights that is whole but for rounding error (800.0000000001)
    // reads as the whole number it is to the printed precision.
    std::string s = chars(w, std::chars_format::fixed, 2);
    if (s.ends_with(".00")) s.resize(s.size() - 3);
    return group_thousands(s);
  }
  if (a >= 1e-4) {
    // 3 significant digits in fixed notation: 0.5 -> 0.500, 0.00123 -> 0.00123.
    const int decimals = 2 - static_cast<int>(std::floor(std::log10(a)));
    return chars(w, std::chars_format::fixed, decimals);
  }
  return scientific(w, 2);
}

std::string percent_text(double fraction) {
  if (!std::isfinite(fraction)) return std::string(not_a_number);
  return chars(fraction * 100.0, std::chars_format::general, 4) + "%";
}

std::string share_text(double fraction) {
  if (!std::isfinite(fraction)) return std::string(not_a_number);
  return fixed_text(fraction * 100.0, 2) + "%";
}

std::string significant_text(double x, int digits) {
  if (!std::isfinite(x)) return std::string(not_a_number);
  return chars(x, std::chars_format::general, digits);
}

std::string shortest_text(double x) {
  if (!std::isfinite(x)) return std::string(not_a_number);
  // Plain to_chars: fixed or scientific, whichever is shorter (1e-04, 0.9888).
  char buffer[32];
  const auto [end, ec] = std::to_chars(buffer, buffer + sizeof buffer, x);
  if (ec != std::errc{}) return std::string(not_a_number);
  return without_negative_zero(std::string(buffer, end));
}

}  // namespace plumb
