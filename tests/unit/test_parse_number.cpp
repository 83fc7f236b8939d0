// io::parse_number against the C library's strtod (correctly rounded in
// glibc), on plain decimals that take its fast path and on forms that do
// not (exponents, blanks, a '+', more than 19 digits or 22 decimals).
#include <catch2/catch.hpp>

#include <cstdlib>
#include <cstring>
#include <random>
#include <string>

#include "plumb/io/csv.hpp"

namespace {

bool same_bits(double a, double b) { return std::memcmp(&a, &b, sizeof a) == 0; }

}  // namespace

TEST_CASE("parse_number gives strtod's double for plain and other decimals", "[csv]") {
  std::mt19937_64 gen(23);
  std::size_t checked = 0;
  for (int k = 0; k < 200000; ++k) {
    const int digits = 1 + static_cast<int>(gen() % 24);
    std::string text = (gen() & 7) == 0 ? "-" : "";
    std::string body;
    for (int d = 0; d < digits; ++d) body += static_cast<char>('0' + gen() % 10);
    const int point = static_cast<int>(gen() % (digits + 1));  // digits before the point
    if (point == digits) text += body;
    else text += (point == 0 ? "0" : body.substr(0, point)) + "." + body.substr(point);
    switch (gen() % 8) {
      case 0: text += "e-" + std::to_string(gen() % 30); break;
      case 1: text = " " + text + "\t"; break;
      case 2: if (text[0] != '-') text = "+" + text; break;
      default: break;
    }
    const std::optional<double> got = plumb::io::parse_number(text);
    const double want = std::strtod(text.c_str(), nullptr);
    INFO(text);
    REQUIRE(got.has_value());
    CHECK(same_bits(*got, want));
    ++checked;
  }
  CHECK(checked == 200000);
  // The exact edges of the fast path: 2^53 and 2^53 + 1 as integers, 22 and
  // 23 decimals, and a negative zero.
  for (const char* text : {"9007199254740992", "9007199254740993", "0.1234567890123456789012",
                           "0.12345678901234567890123", "-0", "-0.0", "1.", ".5"}) {
    INFO(text);
    const std::optional<double> got = plumb::io::parse_number(text);
    REQUIRE(got.has_value());
    CHECK(same_bits(*got, std::strtod(text, nullptr)));
  }
}
