// The CSV reader's longest-record limit holds however the bytes arrive: a
// long record that one read() delivers whole is refused like one that
// arrives in pieces (found by tests/fuzz/fuzz_csv, which compares the two).
#include <catch2/catch.hpp>
#include <fstream>
#include <string>

#include "plumb/io/csv.hpp"
#include "plumb/error.hpp"
#include "support/reference.hpp"

namespace {

std::string write_file(const std::string& name, const std::string& bytes) {
  const std::string path = plumb::test::scratch_dir("csv_record_limit") + "/" + name;
  std::ofstream(path, std::ios::binary) << bytes;
  return path;
}

// Reads every record; returns how many there were.
std::size_t read_all(const std::string& path, std::size_t max_record_bytes) {
  plumb::io::CsvOptions options;
  options.max_record_bytes = max_record_bytes;
  plumb::io::CsvReader reader(path, options);
  plumb::io::Record record;
  std::size_t n = 0;
  while (reader.next(record)) ++n;
  return n;
}

}  // namespace

TEST_CASE("a record longer than max_record_bytes is refused even when it was read whole", "[csv]") {
  // Records count with their line end: "1234567\n" is 8 bytes, "12345678\n" 9.
  const std::string at_limit = write_file("at_limit.csv", "name\n1234567\n7654321\n");
  CHECK(read_all(at_limit, 8) == 2);

  const std::string over = write_file("over.csv", "name\n1234567\n12345678\n");
  try {
    read_all(over, 8);
    FAIL("the 9-byte record was accepted");
  } catch (const plumb::Error& e) {
    CHECK(e.kind() == plumb::ErrorKind::input);
    CHECK(e.where().line == 3);
    CHECK(e.message() == "a record is longer than 8 bytes");
  }

  // The last record, without a line end, is held to the limit too.
  CHECK_THROWS_AS(read_all(write_file("last.csv", "name\n123456789"), 8), plumb::Error);
  // A CRLF line end counts both bytes.
  CHECK_THROWS_AS(read_all(write_file("crlf.csv", "name\r\n1234567\r\n"), 8), plumb::Error);
  CHECK(read_all(write_file("crlf_ok.csv", "name\r\n123456\r\n"), 8) == 1);
}
