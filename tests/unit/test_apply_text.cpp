// apply's text rules: probability_text() against the C library's snprintf
// ("%.*g", C11 7.21.6.1: N significant digits, trailing zeros removed) and
// std::to_chars (shortest round trip, C++17 [charconv.to.chars]); and
// stored_field() against the fields CsvReader reads from the same record.
#include <catch2/catch.hpp>

#include <unistd.h>

#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <random>
#include <string>

#include "plumb/io/apply_stream.hpp"
#include "plumb/io/csv.hpp"

namespace {

std::string text_of(double p, int digits) {
  char buffer[32];
  return std::string(buffer, plumb::io::probability_text(buffer, buffer + sizeof buffer, p, digits));
}

}  // namespace

TEST_CASE("probability_text: N significant digits as printf %.Ng, 0 the shortest round trip", "[apply]") {
  std::mt19937_64 gen(5);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  for (int k = 0; k < 20000; ++k) {
    const double p = k % 5 == 0 ? std::ldexp(unit(gen), -static_cast<int>(gen() % 60)) : unit(gen);
    char shortest[32];
    REQUIRE(text_of(p, 0) == std::string(shortest, std::to_chars(shortest, shortest + 32, p).ptr));
    REQUIRE(std::strtod(text_of(p, 0).c_str(), nullptr) == p);
    for (int digits = 1; digits <= 17; ++digits) {
      char want[64];
      std::snprintf(want, sizeof want, "%.*g", digits, p);
      REQUIRE(text_of(p, digits) == want);
    }
    REQUIRE(std::strtod(text_of(p, 17).c_str(), nullptr) == p);  // 17 digits always round-trip (IEEE 754 binary64)
  }
  CHECK(text_of(0.5, 3) == "0.5");
  CHECK(text_of(0.123456, 2) == "0.12");
  CHECK(text_of(1.0, 1) == "1");
  CHECK(text_of(0.0, 5) == "0");
  CHECK(text_of(0.96, 1) == "1");
  CHECK(text_of(0.00001234, 3) == "1.23e-05");
}

TEST_CASE("stored_field finds the bytes of the field CsvReader reads", "[apply]") {
  const std::string text =
      "a,\"b,c\",d\n"
      "1,\"x \"\"y\"\", z\",3\n"
      "ab\"c,\"\",\n"
      "\"\",,\"q\"\n"
      "\"two\nlines\",2,\"3\"\n";
  char path[] = "/tmp/plumb-stored-field-XXXXXX";
  const int fd = ::mkstemp(path);
  REQUIRE(fd >= 0);
  {
    std::ofstream f(path, std::ios::binary);
    f << text;
  }
  plumb::io::CsvReader reader(path);
  plumb::io::Record record;
  std::size_t records = 0;
  auto unquote = [](std::string_view stored) {
    if (stored.empty() || stored.front() != '"') return std::string(stored);
    std::string out;
    for (std::size_t i = 1; i + 1 < stored.size(); ++i) {
      out += stored[i];
      if (stored[i] == '"') ++i;
    }
    return out;
  };
  while (reader.next(record)) {
    ++records;
    for (std::size_t k = 0; k < record.fields.size(); ++k) {
      const auto [at, length] = plumb::io::stored_field(record.raw, k, ',');
      REQUIRE(at + length <= record.raw.size());
      CHECK(unquote(record.raw.substr(at, length)) == std::string(record.fields[k]));
    }
    CHECK(plumb::io::stored_field(record.raw, record.fields.size(), ',').first == record.raw.size());
  }
  CHECK(records == 4);
  const auto [at, length] = plumb::io::stored_field(reader.header_record().raw, 1, ',');
  CHECK(reader.header_record().raw.substr(at, length) == "\"b,c\"");
  std::remove(path);
  ::close(fd);
}
