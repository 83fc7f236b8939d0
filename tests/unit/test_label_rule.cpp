// io::LabelRule and io::is_missing_value: which label texts are outcomes,
// which are missing, and what each rule records. The spellings are plumb's
// own decisions (docs/cli.md, "Labels" and "Missing values"); the missing
// spellings are what common writers put for a missing value (R's write.csv
// writes NA, pandas NaN or an empty field, SQL exports null, C's printf
// nan or -nan, Python's str() None; from memory).
#include <catch2/catch.hpp>

#include <optional>
#include <string>

#include "plumb/io/labelled_input.hpp"

using plumb::io::is_missing_value;
using plumb::io::LabelRule;

TEST_CASE("is_missing_value knows the common spellings in any letter case", "[labels]") {
  for (const char* t : {"", " ", "\t", "NA", "na", "Na", "NaN", "nan", "NAN", "-nan", "+NaN", "null", "NULL",
                        "Null", "n/a", "N/A", "None", "none", " NA ", "\tnull"})
    CHECK(is_missing_value(t));
  for (const char* t : {"0", "1", "0.5", "nA1", "nana", "n/a/", "no", "not", "nil", "-", "inf", "NaN0", "N A"})
    CHECK_FALSE(is_missing_value(t));
}

TEST_CASE("the default rule reads 1/0, 1.0/0.0 and true/false and nothing else", "[labels]") {
  const LabelRule rule;
  for (const char* t : {"1", "1.0", "1.00", "true", "TRUE", "True"}) CHECK(rule.read(t) == std::optional<double>(1.0));
  for (const char* t : {"0", "0.0", "0.000", "false", "FALSE"}) CHECK(rule.read(t) == std::optional<double>(0.0));
  for (const char* t : {"1.", "01", "+1", "-0", "1e0", "0.5", "2", " 1", "1 ", "yes", "1.01", "0.00001", "t"})
    CHECK_FALSE(rule.read(t).has_value());
  for (const char* t : {"", "NA", "NaN", "null", "n/a"}) {
    CHECK_FALSE(rule.read(t).has_value());
    CHECK(rule.missing(t));
  }
  CHECK_FALSE(rule.missing("yes"));
  CHECK(rule.describe() == "1/0 or true/false");
}

TEST_CASE("a positive value alone: missing spellings are refused, not negatives", "[labels]") {
  const LabelRule rule(std::string("yes"));
  CHECK(rule.read("yes") == std::optional<double>(1.0));
  CHECK(rule.read("Yes") == std::optional<double>(0.0));  // exact text decides
  CHECK(rule.read("no") == std::optional<double>(0.0));
  for (const char* t : {"", "NA", "n/a", "N/A", "NaN", "null", "None"}) {
    CHECK_FALSE(rule.read(t).has_value());
    CHECK(rule.missing(t));
  }
  CHECK(rule.describe() == "'yes' is positive, any other value negative");
}

TEST_CASE("a negative value alone makes every other value positive", "[labels]") {
  const LabelRule rule(std::nullopt, std::string("on_time"));
  CHECK(rule.read("on_time") == std::optional<double>(0.0));
  CHECK(rule.read("late") == std::optional<double>(1.0));
  CHECK_FALSE(rule.read("NA").has_value());
  CHECK(rule.describe() == "'on_time' is negative, any other value positive");
}

TEST_CASE("positive and negative values together refuse a third value", "[labels]") {
  const LabelRule rule(std::string("yes"), std::string("no"));
  CHECK(rule.read("yes") == std::optional<double>(1.0));
  CHECK(rule.read("no") == std::optional<double>(0.0));
  for (const char* t : {"Yes", "NO", "maybe", "1", "0"}) {
    CHECK_FALSE(rule.read(t).has_value());
    CHECK_FALSE(rule.missing(t));
  }
  CHECK(rule.missing("NA"));
  CHECK(rule.describe() == "'yes' is positive, 'no' negative, any other value refused");
}

TEST_CASE("a missing spelling named as a label value is that label", "[labels]") {
  const LabelRule rule(std::string("late"), std::string("NA"));
  CHECK(rule.read("NA") == std::optional<double>(0.0));
  CHECK_FALSE(rule.missing("NA"));
  CHECK_FALSE(rule.read("na").has_value());  // only the exact text is named
  CHECK(rule.missing("na"));
  const LabelRule empty_is_negative(std::string("late"), std::string(""));
  CHECK(empty_is_negative.read("") == std::optional<double>(0.0));
}
