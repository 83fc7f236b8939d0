// io::read_class_scores: the K-class reader's columns, class order, values
// and every refusal with its location. The expected values are written by
// hand from the small files below (no outside library is involved: the
// reader's job is plumb's own rules, docs/cli.md "Multi-class input").
#include <catch2/catch.hpp>

#include <fstream>
#include <string>
#include <vector>

#include <zlib.h>

#include "plumb/error.hpp"
#include "plumb/io/class_input.hpp"
#include "support/reference.hpp"

using plumb::ClassScale;
using plumb::Error;
using plumb::ErrorKind;
using plumb::io::ClassColumns;
using plumb::io::read_class_scores;

namespace {

std::string write_file(const std::string& name, const std::string& text) {
  const std::string path = plumb::test::scratch_dir("class_input_" + name) + "/" + name;
  std::ofstream(path, std::ios::binary) << text;
  return path;
}

ClassColumns parcel_columns() {
  ClassColumns c;
  c.scores = {"p_*"};
  c.label = "outcome";
  return c;
}

// The error read_class_scores throws, as a struct of its parts.
Error refusal(const std::string& path, const ClassColumns& c) {
  try {
    read_class_scores(path, c);
  } catch (const Error& e) {
    return e;
  }
  FAIL("no refusal");
  return Error(ErrorKind::internal, "no refusal");
}

const char* const parcels =
    "id,p_on_time,p_late,p_lost,outcome\n"
    "1,0.7,0.2,0.1,on_time\n"
    "2,0.25,0.5,0.25,late\n"
    "3,0.1,0.1,0.8,lost\n";

}  // namespace

TEST_CASE("a prefix pattern names the classes by what the '*' stands for", "[class_input]") {
  const auto rows = read_class_scores(write_file("a.csv", parcels), parcel_columns());
  CHECK(rows.data.classes == std::vector<std::string>{"on_time", "late", "lost"});
  CHECK(rows.score_columns == std::vector<std::string>{"p_on_time", "p_late", "p_lost"});
  REQUIRE(rows.data.rows == 3);
  CHECK(rows.data.values == std::vector<double>{0.7, 0.2, 0.1, 0.25, 0.5, 0.25, 0.1, 0.1, 0.8});
  CHECK(rows.data.label == std::vector<std::uint32_t>{0, 1, 2});
  CHECK(rows.data.weight.empty());
  CHECK(rows.lines == std::vector<std::uint64_t>{2, 3, 4});
  CHECK(rows.data.scale == ClassScale::probability);
}

TEST_CASE("class order: --classes fixes the order and a list names classes by their headers", "[class_input]") {
  ClassColumns c = parcel_columns();
  c.classes = {"lost", "on_time", "late"};
  const auto rows = read_class_scores(write_file("b.csv", parcels), c);
  CHECK(rows.data.classes == std::vector<std::string>{"lost", "on_time", "late"});
  CHECK(rows.data.values[0] == 0.1);  // row 1's p_lost comes first
  CHECK(rows.data.label == std::vector<std::uint32_t>{1, 2, 0});

  ClassColumns list;
  list.scores = {"on_time", "late"};
  list.label = "y";
  list.scale = ClassScale::logit;
  list.weight = "w";
  const auto logits = read_class_scores(write_file("c.tsv", "on_time\tlate\ty\tw\n-1.5\t2\tlate\t3\n"), list);
  CHECK(logits.data.classes == std::vector<std::string>{"on_time", "late"});
  CHECK(logits.data.values == std::vector<double>{-1.5, 2.0});
  CHECK(logits.data.weight == std::vector<double>{3.0});
  CHECK(logits.data.label == std::vector<std::uint32_t>{1});
}

TEST_CASE("a suffix pattern and gzip input", "[class_input]") {
  const std::string text = "on_time_prob,late_prob,outcome\n0.5,0.5,late\n";
  const std::string path = plumb::test::scratch_dir("class_input_gz") + "/rows.csv.gz";
  gzFile f = gzopen(path.c_str(), "wb");
  gzwrite(f, text.data(), static_cast<unsigned>(text.size()));
  gzclose(f);
  ClassColumns c;
  c.scores = {"*_prob"};
  c.label = "outcome";
  const auto rows = read_class_scores(path, c);
  CHECK(rows.data.classes == std::vector<std::string>{"on_time", "late"});
  CHECK(rows.data.label == std::vector<std::uint32_t>{1});
}

TEST_CASE("missing values are refused or skipped as for binary rows", "[class_input]") {
  const std::string path = write_file("m.csv", "p_a,p_b,y\n0.5,0.5,a\nNA,0.5,b\n0.4,0.6,\n0.3,0.7,b\n");
  ClassColumns c;
  c.scores = {"p_*"};
  c.label = "y";
  const Error e = refusal(path, c);
  CHECK(e.kind() == ErrorKind::input);
  CHECK(e.message() == "the score is missing");
  CHECK(e.where().line == 3);
  CHECK(e.where().column == 1);
  CHECK(e.where().column_name == "p_a");
  c.missing = plumb::io::MissingPolicy::skip;
  const auto rows = read_class_scores(path, c);
  CHECK(rows.data.rows == 2);
  CHECK(rows.skipped == 2);
  CHECK(rows.skipped_lines == std::vector<std::uint64_t>{3, 4});
  CHECK(rows.data.label == std::vector<std::uint32_t>{0, 1});
}

TEST_CASE("every refusal of the K-class reader is located", "[class_input]") {
  ClassColumns c;
  c.scores = {"p_*"};
  c.label = "y";
  SECTION("K = 1 from a pattern") {
    const Error e = refusal(write_file("k1.csv", "p_a,q,y\n1,0,a\n"), c);
    CHECK(e.kind() == ErrorKind::input);
    CHECK(e.message() == "only one column matches the --scores pattern (K = 1)");
    CHECK(e.where().line == 1);
    CHECK(e.where().column == 1);
    CHECK(e.where().column_name == "p_a");
  }
  SECTION("K = 1 from a list") {
    c.scores = {"q"};
    const Error e = refusal(write_file("k1b.csv", "p_a,q,y\n1,0,a\n"), c);
    CHECK(e.message() == "one score column is one class (K = 1)");
    CHECK(e.where().column == 2);
  }
  SECTION("a duplicated class name in --classes") {
    c.classes = {"a", "a"};
    const Error e = refusal(write_file("dup.csv", "p_a,p_b,y\n0.5,0.5,a\n"), c);
    CHECK(e.kind() == ErrorKind::usage);
    CHECK(e.message() == "--classes names a class twice");
    CHECK(e.value() == "a");
  }
  SECTION("a duplicated score column in a list") {
    c.scores = {"p_a", "1"};
    const Error e = refusal(write_file("dupcol.csv", "p_a,p_b,y\n0.5,0.5,a\n"), c);
    CHECK(e.message() == "a score column is named twice in --scores");
    CHECK(e.where().column == 1);
  }
  SECTION("a label not among the classes") {
    const Error e = refusal(write_file("lab.csv", "p_a,p_b,y\n0.5,0.5,a\n0.5,0.5,c\n"), c);
    CHECK(e.kind() == ErrorKind::input);
    CHECK(e.message() == "the label is not one of the classes");
    CHECK(e.where().line == 3);
    CHECK(e.where().column == 3);
    CHECK(e.where().column_name == "y");
    CHECK(e.value() == "c");
    CHECK(e.expected() == "one of the classes a, b");
  }
  SECTION("a label with stray whitespace") {
    const Error e = refusal(write_file("ws.csv", "p_a,p_b,y\n0.5,0.5,\"b \"\n"), c);
    CHECK(e.message() == "the label has spaces or tabs around it");
    CHECK(e.where().line == 2);
    CHECK(e.value() == "b ");
  }
  SECTION("a logit of inf") {
    c.scale = ClassScale::logit;
    const Error e = refusal(write_file("inf.csv", "p_a,p_b,y\n1,2,a\n0,inf,b\n"), c);
    CHECK(e.message() == "the logit is not finite");
    CHECK(e.where().line == 3);
    CHECK(e.where().column == 2);
    CHECK(e.value() == "inf");
  }
  SECTION("a logit of nan is a missing score") {
    c.scale = ClassScale::logit;
    const Error e = refusal(write_file("nan.csv", "p_a,p_b,y\nnan,2,a\n"), c);
    CHECK(e.message() == "the score is missing");
    CHECK(e.where().column == 1);
  }
  SECTION("probabilities not summing to 1 within the tolerance") {
    // 0.5 + 0.4985 misses 1 by 0.0015 > 0.001; 0.5 + 0.4995 by 0.0005 passes.
    const std::string path = write_file("sum.csv", "p_a,p_b,y\n0.5,0.4995,a\n0.5,0.4985,b\n");
    const Error e = refusal(path, c);
    CHECK(e.message() == "the row's 2 probabilities sum to 0.9985");
    CHECK(e.where().line == 3);
    CHECK(e.where().column == 1);
    CHECK(e.expected() == "a sum within 0.001 of 1 (or --sum-tolerance to widen it, or --scale logit for logits)");
    c.sum_tolerance = 0.002;
    CHECK(read_class_scores(path, c).data.rows == 2);
  }
  SECTION("a probability outside [0, 1]") {
    const Error e = refusal(write_file("out.csv", "p_a,p_b,y\n1.5,-0.5,a\n"), c);
    CHECK(e.message() == "the score lies outside [0, 1]");
    CHECK(e.where().column == 1);
  }
  SECTION("--classes naming an unknown class or leaving one out") {
    c.classes = {"a", "z"};
    CHECK(refusal(write_file("cl1.csv", "p_a,p_b,y\n0.5,0.5,a\n"), c).message() ==
          "--classes names a class that no score column holds");
    c.classes = {"a"};
    const Error e = refusal(write_file("cl2.csv", "p_a,p_b,y\n0.5,0.5,a\n"), c);
    CHECK(e.message() == "--classes leaves out a class of the score columns");
    CHECK(e.where().column == 2);
  }
  SECTION("a negative weight, and a label column that is a score column") {
    c.weight = "w";
    const Error e = refusal(write_file("w.csv", "p_a,p_b,y,w\n0.5,0.5,a,-1\n"), c);
    CHECK(e.message() == "the weight is negative");
    CHECK(e.where().column == 4);
    c.weight.clear();
    c.label = "p_b";
    CHECK(refusal(write_file("lw.csv", "p_a,p_b,y\n0.5,0.5,a\n"), c).message() ==
          "the label column is also a score column");
  }
  SECTION("no rows") {
    const Error e = refusal(write_file("none.csv", "p_a,p_b,y\n"), c);
    CHECK(e.message() == "the file has a header but no data rows");
  }
}
