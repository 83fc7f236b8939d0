// Blank lines: skipped in a file of several columns, read as a record with
// one empty field in a one-column file, where the empty line is an empty
// value (a missing score) and dropping it would lose a row of the output.
#include <catch2/catch.hpp>
#include <fstream>
#include <string>
#include <vector>

#include "plumb/io/csv.hpp"
#include "support/reference.hpp"

namespace {

struct Seen {
  std::vector<std::string> first_field;
  std::vector<std::uint64_t> lines;
  std::vector<std::string> line_ends;
};

Seen read_all(const std::string& name, const std::string& bytes) {
  const std::string path = plumb::test::scratch_dir("csv_blank_lines") + "/" + name;
  std::ofstream(path, std::ios::binary) << bytes;
  plumb::io::CsvReader reader(path);
  plumb::io::Record record;
  Seen seen;
  while (reader.next(record)) {
    REQUIRE(record.fields.size() == reader.header().size());
    seen.first_field.emplace_back(record.fields[0]);
    seen.lines.push_back(record.line);
    seen.line_ends.emplace_back(record.line_end);
  }
  return seen;
}

}  // namespace

TEST_CASE("a blank line is a record of one empty field only in a one-column file", "[csv]") {
  const Seen one = read_all("one.csv", "score\n0.3\n\n0.6\r\n\r\n0.9\n");
  CHECK(one.first_field == std::vector<std::string>{"0.3", "", "0.6", "", "0.9"});
  CHECK(one.lines == std::vector<std::uint64_t>{2, 3, 4, 5, 6});
  CHECK(one.line_ends == std::vector<std::string>{"\n", "\n", "\r\n", "\r\n", "\n"});

  const Seen two = read_all("two.csv", "score,label\n0.3,1\n\n0.6,0\r\n\r\n0.9,1\n");
  CHECK(two.first_field == std::vector<std::string>{"0.3", "0.6", "0.9"});
  CHECK(two.lines == std::vector<std::uint64_t>{2, 4, 6});

  // A file that ends with its last line end has no empty record after it.
  CHECK(read_all("end.csv", "score\n0.3\n").first_field == std::vector<std::string>{"0.3"});
}
