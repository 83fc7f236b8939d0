#pragma once
// A calibration map written as SQL, so that a warehouse table of scores can
// be calibrated where it lives, with the numbers of `plumb apply`.
//
// The text repeats the map's own arithmetic in the engine's doubles:
// - platt, temperature, beta: the closed form, with the probability clipped
//   into [probability_clip, 1 - probability_clip] before a log-odds or a
//   logarithm exactly as the map clips it, and the logistic function taken
//   as the map takes it (1 / (1 + exp(-x)) for x >= 0, exp(x) / (1 + exp(x))
//   below). SQL has no log1p: ln(1 - q) stands for log1p(-q), which differs
//   by at most an ulp of 1 - q (about 1e-16 in the log-odds).
// - isotonic: the block holding the score, or the linear interpolation
//   between the two blocks around it (the gap and the rise written as the
//   doubles the map computes, so the division and the product are the
//   map's), clamped to the two block values; outside the fitted scores the
//   end block's value. histogram: the bin whose boundary (the midpoint of
//   the gap to the next bin, as the map computes it) is the first at or
//   above the score.
// - fold_average: the fold maps' probabilities summed in order and divided
//   by their count.
// A map of at most `inline_max` pieces (isotonic blocks and histogram bins,
// over all the folds of a fold average) is written into the expression as
// nested CASEs, a binary search for the piece; a larger one is looked up in a knot table that the text
// creates and fills first (one table per piecewise map, named
// knot_table, knot_table_2, ...), searched through its primary key.
//
// What differs from apply: apply refuses a score it cannot map (not a
// number, infinite, outside [0, 1] on the probability scale) and writes an
// empty probability for a missing one under --missing empty; the SQL gives
// NULL for all of these (SQL expressions cannot raise an error in SQLite).
// The argument of exp is held to [-700, 700] (PostgreSQL raises an error
// when exp overflows or underflows), which moves a probability below
// 1e-300 at most; beyond the fitted scores on the logit and margin scales a
// score is held where the map's probability is already 0 or 1 to the same
// 1e-300.
#include <cstddef>
#include <optional>
#include <string>
#include <string_view>

#include <vector>

#include "plumb/calibration_map.hpp"
#include "plumb/class_map.hpp"

namespace plumb::io {

enum class SqlDialect {
  sqlite,      // SQLite 3.35 or later built with its math functions (ln, exp)
  postgresql,  // PostgreSQL: a CREATE FUNCTION of the score
  ansi,        // SQL:2023 (CASE, CAST, LN, EXP, LEAST, GREATEST, FETCH FIRST)
};

// "sqlite", "postgresql" or "ansi"; nullopt otherwise.
std::optional<SqlDialect> parse_sql_dialect(std::string_view text) noexcept;

struct SqlExportOptions {
  SqlDialect dialect = SqlDialect::sqlite;
  // The score column the expression reads (sqlite, ansi); quoted as an
  // identifier in the text.
  std::string score_column = "score";
  // The function created (postgresql); its one argument is named score.
  std::string function_name = "plumb_calibrated";
  // The name of the (first) knot table, when one is needed.
  std::string knot_table = "plumb_knots";
  // Maps with more pieces than this use knot tables. Large inline
  // expressions are slow to compile by PostgreSQL's JIT (about 6 s for 106
  // blocks, minutes for 500, when a query's cost calls for it).
  std::size_t inline_max = 128;
  // Said in the text's first comment line ("the isotonic map of late.map.json").
  std::string source_note;
};

// The SQL text for `map`: comment lines saying what it is and how it treats
// NULL and invalid scores; the knot tables' CREATE TABLE and INSERT
// statements, if any; then, for sqlite and ansi, a comment line starting
// "-- The probability" followed by the expression (no terminating
// semicolon), or for postgresql a CREATE OR REPLACE FUNCTION statement.
// Every number reads back as the same double: the shortest decimal text for
// postgresql and ansi; for sqlite, whose decimal reader is not always
// correctly rounded, an integer divided by powers of two (exact in SQLite)
// with the decimal in a comment. Identifiers are double-quoted. Throws plumb::Error(usage) when the
// score column's name is one of the knot tables' column names (the lookup
// could not tell them apart), when a name is empty, or when the map is of a
// kind it does not know.
std::string sql_export(const CalibrationMap& map, const SqlExportOptions& options);

// A multi-class map (temperature, vector, dirichlet, one_vs_rest) as SQL of
// its K score columns. The map's steps (plumb/class_map.hpp) are written as
// nested derived tables, one per step, each computing its values once and
// in apply's order: the row's log-probabilities (the floor, the logarithms,
// the logarithm of their sum; or log-sum-exp with the row's largest logit
// taken out), the linear part, then softmax with the largest value taken
// out before exp; for one_vs_rest the row's probabilities, each class's
// binary map as sql_export writes it (knot tables shared out as there,
// counting the pieces of all K maps against inline_max; always knot tables
// for sqlite, whose parser stack cannot hold the nested CASEs there), then the
// renormalisation (1/K each when every mapped value is 0). exp of a value
// below -700 is taken at -700 (PostgreSQL raises an error on underflow),
// which moves a probability by less than 1e-300.
//
// Every dialect: after a comment line starting "-- The probabilities", a
// select list of K expressions, each "CASE ... END AS "COLUMN_calibrated""
// (apply's default names), separated by commas; each expression is a
// correlated scalar subquery of the row. (No function for postgresql: a
// function holding the subqueries is not inlined into the query, and
// PostgreSQL then spends milliseconds a row on it.) A row apply refuses (a logit
// not finite; a probability outside [0, 1] or not a number, or a sum further
// than sum_tolerance from 1) and a row with a NULL score give NULL. Throws
// plumb::Error(usage) for a score column named as a knot table column or
// starting with plumb_ (the text's own names), an empty name, or a kind it
// does not know.
struct ClassSqlExportOptions {
  SqlDialect dialect = SqlDialect::sqlite;
  std::vector<std::string> score_columns;  // one per class, in class order
  std::string knot_table = "plumb_knots";
  std::size_t inline_max = 128;
  std::string source_note;
  double sum_tolerance = 1e-3;  // as apply uses it: the artifact's fit_options.sum_tolerance, else 1e-3
};
std::string class_sql_export(const ClassCalibrationMap& map, const ClassSqlExportOptions& options);

}  // namespace plumb::io
