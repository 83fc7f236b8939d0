#include "plumb/io/sql_export.hpp"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <functional>
#include <limits>
#include <vector>

#include "plumb/error.hpp"
#include "plumb/number_text.hpp"
#include "plumb/maps/beta_map.hpp"
#include "plumb/maps/centered_isotonic_map.hpp"
#include "plumb/maps/class_scaling_map.hpp"
#include "plumb/maps/one_vs_rest_map.hpp"
#include "plumb/maps/fold_average_map.hpp"
#include "plumb/maps/histogram_map.hpp"
#include "plumb/maps/isotonic_map.hpp"
#include "plumb/maps/platt_map.hpp"
#include "plumb/maps/temperature_map.hpp"
#include "plumb/scale.hpp"

namespace plumb::io {
namespace {

// The knot tables' columns. The lookup's subquery reads the score column
// unqualified, so a score column of one of these names is refused.
constexpr std::array<std::string_view, 7> knot_columns = {"knot_lo",   "knot_hi",   "knot_value", "knot_gap",
                                                          "knot_rise", "knot_next", "knot_upper"};

// Beyond this the logistic function is 0 or 1 to within 1e-300, and exp of
// it stays a normal double (PostgreSQL raises an error on underflow).
constexpr double exp_limit = 700.0;
// Held to this linear predictor magnitude, a logit or margin score gives a
// probability within 1e-300 of the map's (|x| > 745 is 0 or 1 exactly).
constexpr double saturated = 800.0;

std::string sql_name(std::string_view name) {
  std::string out = "\"";
  for (char c : name) {
    if (c == '"') out += '"';
    out += c;
  }
  return out + "\"";
}

// The isotonic blocks and histogram bins of a map, fold maps included.
std::size_t pieces(const CalibrationMap& map) {
  if (const auto* m = dynamic_cast<const IsotonicMap*>(&map)) return m->blocks().size();
  if (const auto* m = dynamic_cast<const HistogramMap*>(&map)) return m->bins().size();
  if (const auto* m = dynamic_cast<const CenteredIsotonicMap*>(&map)) return m->point_score().size();
  std::size_t n = 0;
  if (const auto* m = dynamic_cast<const FoldAverageMap*>(&map))
    for (const auto& fold : m->maps()) n += pieces(*fold);
  return n;
}

// A double as SQLite reads it exactly. SQLite (3.40 at least) does not
// always read a decimal as the nearest double: it reads 0.953347 one ulp low,
// which an interpolation over a gap of 1e-6 would turn into 1e-10. It reads
// an integer below 2^63 exactly, converts it to a double exactly when below
// 2^53, and a division by a power of two is exact. So a double that is not
// a whole number is written as its odd significand divided by powers of two,
// followed by its shortest decimal `text` as a comment; whole numbers below
// 2^53 as "N.0" (read as N * 10 / 10, exact). Precondition: x finite.
std::string sqlite_exact(double x, const std::string& text) {
  if (x == std::trunc(x) && std::abs(x) < 0x1p53) {
    std::string whole = std::to_string(static_cast<long long>(x)) + ".0";
    return whole[0] == '-' ? "(" + whole + ")" : whole;
  }
  int exponent = 0;
  const double fraction = std::frexp(x, &exponent);  // x = fraction * 2^exponent, 0.5 <= |fraction| < 1
  auto significand = static_cast<long long>(std::ldexp(fraction, 53));
  int divide = 53 - exponent;  // x = significand / 2^divide
  while (divide > 0 && significand % 2 == 0) {
    significand /= 2;
    --divide;
  }
  std::string out = "(CAST(" + std::to_string(significand) + " AS REAL)";
  if (divide < 0) {  // whole numbers of 2^53 or more
    for (; divide < 0; divide += std::min(-divide, 62))
      out += " * CAST(" + std::to_string(1LL << std::min(-divide, 62)) + " AS REAL)";
  }
  for (; divide > 0; divide -= std::min(divide, 62))
    out += " / CAST(" + std::to_string(1LL << std::min(divide, 62)) + " AS REAL)";
  return out + " /* " + text + " */)";
}

class Writer {
 public:
  Writer(const SqlExportOptions& o) : o_(o) {}

  // A double literal that the dialect reads back as the same double, typed
  // as a double (never an integer or a numeric), safe after any operator.
  std::string num(double x) const {
    char text[64];
    const auto [end, ec] = std::to_chars(text, text + sizeof text, x);
    std::string s(text, ec == std::errc{} ? end : text);
    switch (o_.dialect) {
      case SqlDialect::sqlite:
        return sqlite_exact(x, s);
      case SqlDialect::postgresql:
        return "'" + s + "'::float8";
      case SqlDialect::ansi:
        return "CAST(" + s + " AS DOUBLE PRECISION)";
    }
    return s;
  }
  std::string least(const std::string& a, const std::string& b) const {
    return (o_.dialect == SqlDialect::sqlite ? "min(" : "LEAST(") + a + ", " + b + ")";
  }
  std::string greatest(const std::string& a, const std::string& b) const {
    return (o_.dialect == SqlDialect::sqlite ? "max(" : "GREATEST(") + a + ", " + b + ")";
  }
  // clamp(x, lo, hi) as std::clamp computes it, for lo <= hi.
  std::string clamp(const std::string& x, const std::string& lo, const std::string& hi) const {
    return greatest(lo, least(hi, x));
  }
  std::string ln(const std::string& x) const { return "ln(" + x + ")"; }
  std::string exp(const std::string& x) const { return "exp(" + x + ")"; }
  std::string first_row() const {
    return o_.dialect == SqlDialect::ansi ? " FETCH FIRST 1 ROW ONLY" : " LIMIT 1";
  }

  // The score as the expression reads it.
  std::string score() const {
    if (o_.dialect == SqlDialect::postgresql) return "score";
    if (o_.dialect == SqlDialect::ansi) return "CAST(" + sql_name(o_.score_column) + " AS DOUBLE PRECISION)";
    return sql_name(o_.score_column);
  }

  // The probability of `map` at score expression `s` (a valid score).
  std::string probability(const CalibrationMap& map, const std::string& s) {
    if (const auto* m = dynamic_cast<const PlattMap*>(&map)) {
      const std::string f = map.scale() == Scale::probability ? logit(s) : held(s, (saturated + std::abs(m->b())) / std::abs(m->a()));
      return sigmoid("-((" + num(m->a()) + " * " + f + ") + " + num(m->b()) + ")");
    }
    if (const auto* m = dynamic_cast<const TemperatureMap*>(&map)) {
      const std::string z = map.scale() == Scale::probability ? logit(s) : held(s, saturated * m->temperature());
      return sigmoid("(" + z + " / " + num(m->temperature()) + ")");
    }
    if (const auto* m = dynamic_cast<const BetaMap*>(&map)) {
      const std::string q = clipped(s);
      return sigmoid("(((" + num(m->a()) + " * " + ln(q) + ") - (" + num(m->b()) + " * " + ln(num(1.0) + " - " + q) +
                     ")) + " + num(m->c()) + ")");
    }
    if (const auto* m = dynamic_cast<const IsotonicMap*>(&map))
      return isotonic(m->blocks(), map.parameters().at("between_blocks") == "linear", s);
    if (const auto* m = dynamic_cast<const CenteredIsotonicMap*>(&map)) return centered(*m, s);
    if (const auto* m = dynamic_cast<const HistogramMap*>(&map)) return histogram(*m, s);
    if (const auto* m = dynamic_cast<const FoldAverageMap*>(&map)) {
      std::string sum;
      // a + b + c adds left to right, as FoldAverageMap::map does; unnested,
      // it keeps SQLite's parser stack shallow.
      for (const auto& fold : m->maps()) sum += (sum.empty() ? "" : " + ") + probability(*fold, s);
      return "((" + sum + ") / " + num(static_cast<double>(m->maps().size())) + ")";
    }
    throw Error(ErrorKind::usage, "no SQL form for " + kind_with_article(map.kind()) + " map", {},
                std::string(map.kind()),
                "platt, temperature, beta, isotonic, centered_isotonic, histogram or fold_average");
  }

  std::string tables;       // the knot tables' statements, in order
  bool use_tables = false;  // the map's pieces are looked up in knot tables

 private:
  std::string clipped(const std::string& s) const {
    return clamp(s, num(probability_clip), num(1.0 - probability_clip));
  }
  // clipped_logit: log(q) - log1p(-q), with ln(1 - q) for log1p(-q).
  std::string logit(const std::string& s) const {
    const std::string q = clipped(s);
    return "(" + ln(q) + " - " + ln(num(1.0) + " - " + q) + ")";
  }
  // A logit or margin score held to [-limit, limit], where the map is
  // saturated, so that no product overflows; unchanged when no finite
  // double reaches the limit.
  std::string held(const std::string& s, double limit) const {
    if (!std::isfinite(limit)) return s;
    return clamp(s, num(-limit), num(limit));
  }
  // plumb::sigmoid, with its argument held to [-exp_limit, exp_limit].
  std::string sigmoid(const std::string& raw) const {
    const std::string x = clamp(raw, num(-exp_limit), num(exp_limit));
    return "(CASE WHEN " + x + " >= " + num(0.0) + " THEN " + num(1.0) + " / (" + num(1.0) + " + " + exp("-" + x) +
           ") ELSE " + exp(x) + " / (" + num(1.0) + " + " + exp(x) + ") END)";
  }

  std::string next_table() {
    ++tables_made_;
    return tables_made_ == 1 ? o_.knot_table : o_.knot_table + "_" + std::to_string(tables_made_);
  }

  std::string isotonic(const std::vector<PavBlock>& blocks, bool linear, const std::string& s) {
    const PavBlock& first = blocks.front();
    const PavBlock& last = blocks.back();
    // Between blocks i and i + 1, as IsotonicMap::map computes it.
    auto between = [&](std::size_t i) {
      const PavBlock& l = blocks[i];
      const PavBlock& r = blocks[i + 1];
      if (!linear) return num(l.value);
      const double gap = r.score_lo - l.score_hi;
      const std::string t = std::isfinite(gap)
                                ? "((" + s + " - " + num(l.score_hi) + ") / " + num(gap) + ")"
                                : "(((" + num(0.5) + " * " + s + ") - " + num(0.5 * l.score_hi) + ") / " +
                                      num(0.5 * r.score_lo - 0.5 * l.score_hi) + ")";
      return clamp("(" + num(l.value) + " + (" + t + " * " + num(r.value - l.value) + "))", num(l.value),
                   num(r.value));
    };
    bool finite_gaps = true;
    for (std::size_t i = 0; i + 1 < blocks.size(); ++i)
      finite_gaps = finite_gaps && std::isfinite(blocks[i + 1].score_lo - blocks[i].score_hi);
    std::string out = "(CASE WHEN " + s + " < " + num(first.score_lo) + " THEN " + num(first.value) + " WHEN " + s +
                      " > " + num(last.score_hi) + " THEN " + num(last.value);
    if (!use_tables || !finite_gaps) {
      // A binary search for the last block starting at or before the score
      // (IsotonicMap::block_at), as nested CASEs over blocks [i, j).
      std::function<std::string(std::size_t, std::size_t)> search = [&](std::size_t i, std::size_t j) {
        if (j - i > 1) {
          const std::size_t mid = i + (j - i) / 2;
          return "CASE WHEN " + s + " < " + num(blocks[mid].score_lo) + " THEN " + search(i, mid) + " ELSE " +
                 search(mid, j) + " END";
        }
        if (i + 1 == blocks.size()) return num(last.value);  // s <= last.score_hi here
        return "CASE WHEN " + s + " <= " + num(blocks[i].score_hi) + " THEN " + num(blocks[i].value) + " ELSE " +
               between(i) + " END";
      };
      return out + " ELSE " + search(0, blocks.size()) + " END)";
    }
    const std::string table = sql_name(next_table());
    tables += "CREATE TABLE " + table +
              " (knot_lo DOUBLE PRECISION PRIMARY KEY, knot_hi DOUBLE PRECISION NOT NULL, knot_value DOUBLE "
              "PRECISION NOT NULL, knot_gap DOUBLE PRECISION, knot_rise DOUBLE PRECISION, knot_next DOUBLE "
              "PRECISION);\n";
    for (std::size_t i = 0; i < blocks.size(); ++i) {
      const PavBlock& b = blocks[i];
      const bool has_next = i + 1 < blocks.size();
      tables += "INSERT INTO " + table + " VALUES (" + num(b.score_lo) + ", " + num(b.score_hi) + ", " +
                num(b.value) + ", " + (has_next ? num(blocks[i + 1].score_lo - b.score_hi) : "NULL") + ", " +
                (has_next ? num(blocks[i + 1].value - b.value) : "NULL") + ", " +
                (has_next ? num(blocks[i + 1].value) : "NULL") + ");\n";
    }
    const std::string inside =
        linear ? "CASE WHEN " + s + " <= k.knot_hi THEN k.knot_value ELSE " +
                     clamp("(k.knot_value + (((" + s + " - k.knot_hi) / k.knot_gap) * k.knot_rise))", "k.knot_value",
                           "k.knot_next") +
                     " END"
               : std::string("k.knot_value");
    return out + " ELSE (SELECT " + inside + " FROM " + table + " AS k WHERE k.knot_lo <= " + s +
           " ORDER BY k.knot_lo DESC" + first_row() + ") END)";
  }

  // CenteredIsotonicMap::line and map: the line through the points (the
  // last point at or below the score and the next), the end values held,
  // then the strict form's minimal slope.
  std::string centered(const CenteredIsotonicMap& m, const std::string& s) {
    const auto& x = m.point_score();
    const auto& y = m.point_value();
    const std::size_t n = x.size();
    bool finite_gaps = true;
    for (std::size_t i = 0; i + 1 < n; ++i) finite_gaps = finite_gaps && std::isfinite(x[i + 1] - x[i]);
    // The line from point i to point i + 1 (y never overflows: it lies in [0, 1]).
    auto segment = [&](std::size_t i) {
      const double gap = x[i + 1] - x[i];
      const std::string t = std::isfinite(gap)
                                ? "((" + s + " - " + num(x[i]) + ") / " + num(gap) + ")"
                                : "(((" + num(0.5) + " * " + s + ") - " + num(0.5 * x[i]) + ") / " +
                                      num(0.5 * x[i + 1] - 0.5 * x[i]) + ")";
      return clamp("(" + num(y[i]) + " + (" + t + " * " + num(y[i + 1] - y[i]) + "))", num(y[i]), num(y[i + 1]));
    };
    std::string line = "(CASE WHEN " + s + " <= " + num(x.front()) + " THEN " + num(y.front()) + " WHEN " + s +
                       " >= " + num(x.back()) + " THEN " + num(y.back());
    if (!use_tables || !finite_gaps) {
      // A binary search for the last point at or below the score, as nested
      // CASEs over the segments [i, j) (segment i joins points i and i + 1).
      std::function<std::string(std::size_t, std::size_t)> search = [&](std::size_t i, std::size_t j) {
        if (j - i == 1) return segment(i);
        const std::size_t mid = i + (j - i) / 2;
        return "CASE WHEN " + s + " < " + num(x[mid]) + " THEN " + search(i, mid) + " ELSE " + search(mid, j) + " END";
      };
      line += " ELSE " + search(0, n - 1) + " END)";
    } else {
      const std::string table = sql_name(next_table());
      tables += "CREATE TABLE " + table +
                " (knot_lo DOUBLE PRECISION PRIMARY KEY, knot_value DOUBLE PRECISION NOT NULL, knot_gap DOUBLE "
                "PRECISION NOT NULL, knot_rise DOUBLE PRECISION NOT NULL, knot_next DOUBLE PRECISION NOT NULL);\n";
      for (std::size_t i = 0; i + 1 < n; ++i)
        tables += "INSERT INTO " + table + " VALUES (" + num(x[i]) + ", " + num(y[i]) + ", " + num(x[i + 1] - x[i]) +
                  ", " + num(y[i + 1] - y[i]) + ", " + num(y[i + 1]) + ");\n";
      line += " ELSE (SELECT " +
              clamp("(k.knot_value + (((" + s + " - k.knot_lo) / k.knot_gap) * k.knot_rise))", "k.knot_value",
                    "k.knot_next") +
              " FROM " + table + " AS k WHERE k.knot_lo <= " + s + " ORDER BY k.knot_lo DESC" + first_row() + ") END)";
    }
    if (!m.strict()) return line;
    const std::string t = "(" + num(0.5) + " + (" + num(0.5) + " * tanh(((" + num(0.5) + " * " + s + ") - " +
                          num(0.5 * m.middle()) + ") / " + num(0.5 * m.half_width()) + ")))";
    return clamp("((" + num(1.0 - m.tilt()) + " * " + line + ") + (" + num(m.tilt()) + " * " + t + "))", num(0.0),
                 num(1.0));
  }

  std::string histogram(const HistogramMap& m, const std::string& s) {
    const auto& bins = m.bins();
    const auto& upper = m.boundaries();
    if (!use_tables) {
      // A binary search for the first bin whose boundary is at or above the
      // score (HistogramMap::map's lower_bound), as nested CASEs over bins [i, j).
      std::function<std::string(std::size_t, std::size_t)> search = [&](std::size_t i, std::size_t j) {
        if (j - i == 1) return num(bins[i].value);
        const std::size_t mid = i + (j - i) / 2;
        return "CASE WHEN " + s + " <= " + num(upper[mid - 1]) + " THEN " + search(i, mid) + " ELSE " +
               search(mid, j) + " END";
      };
      return "(" + search(0, bins.size()) + ")";
    }
    const std::string table = sql_name(next_table());
    tables += "CREATE TABLE " + table +
              " (knot_upper DOUBLE PRECISION PRIMARY KEY, knot_value DOUBLE PRECISION NOT NULL);\n";
    for (std::size_t i = 0; i < upper.size(); ++i)
      tables += "INSERT INTO " + table + " VALUES (" + num(upper[i]) + ", " + num(bins[i].value) + ");\n";
    return "COALESCE((SELECT k.knot_value FROM " + table + " AS k WHERE k.knot_upper >= " + s +
           " ORDER BY k.knot_upper" + first_row() + "), " + num(bins.back().value) + ")";
  }

  const SqlExportOptions& o_;
  int tables_made_ = 0;
};

}  // namespace

std::optional<SqlDialect> parse_sql_dialect(std::string_view text) noexcept {
  if (text == "sqlite") return SqlDialect::sqlite;
  if (text == "postgresql") return SqlDialect::postgresql;
  if (text == "ansi") return SqlDialect::ansi;
  return std::nullopt;
}

std::string sql_export(const CalibrationMap& map, const SqlExportOptions& options) {
  for (const std::string_view column : knot_columns)
    if (options.score_column == column)
      throw Error(ErrorKind::usage, "the score column has the name of a knot table column", {}, options.score_column,
                  "a column named otherwise (rename it in a view)");
  if (options.score_column.empty() || options.function_name.empty() || options.knot_table.empty())
    throw Error(ErrorKind::usage, "an SQL name is empty", {}, {}, "a column, function and table name");

  Writer w(options);
  w.use_tables = pieces(map) > options.inline_max;
  const std::string s = w.score();
  const std::string valid =
      map.scale() == Scale::probability
          ? s + " >= " + w.num(0.0) + " AND " + s + " <= " + w.num(1.0)
          : s + " >= " + w.num(-std::numeric_limits<double>::max()) + " AND " + s + " <= " +
                w.num(std::numeric_limits<double>::max());
  const std::string expression = "CASE WHEN " + valid + " THEN " + w.probability(map, s) + " END";

  // The note names files and columns: a line break in it would end the comment.
  std::string note = options.source_note.empty() ? kind_with_article(map.kind()) + " map" : options.source_note;
  for (char& c : note)
    if (c == '\n' || c == '\r') c = ' ';
  std::string out = "-- plumb: " + note +
                    ", on " + std::string(to_string(map.scale())) + " scores.\n";
  out += map.scale() == Scale::probability
             ? "-- NULL for a NULL score and for a score plumb apply refuses (below 0, above 1, not a number).\n"
             : "-- NULL for a NULL score and for a score plumb apply refuses (infinite, not a number).\n";
  out += w.tables;
  // Not STRICT: PostgreSQL inlines a one-expression SQL function into the
  // query only when it is not STRICT (the CASE already gives NULL for NULL),
  // which makes it ten times faster on the demo's rows.
  if (options.dialect == SqlDialect::postgresql) {
    out += "CREATE OR REPLACE FUNCTION " + sql_name(options.function_name) +
           "(score double precision) RETURNS double precision\n  LANGUAGE sql " +
           (w.tables.empty() ? "IMMUTABLE" : "STABLE") + " PARALLEL SAFE\n  RETURN " + expression + ";\n";
  } else {
    std::string column = sql_name(options.score_column);
    for (char& c : column)
      if (c == '\n' || c == '\r') c = ' ';
    out += "-- The probability for the score column " + column + ":\n" + expression + "\n";
  }
  return out;
}

}  // namespace plumb::io

namespace plumb::io {
namespace {

// The steps of a multi-class map as nested derived tables: each level
// selects the previous level's columns and adds its own (names plumb_*),
// so that every intermediate value is computed once and in apply's order.
class Levels {
 public:
  explicit Levels(SqlDialect dialect) : dialect_(dialect) {}
  void add(std::vector<std::pair<std::string, std::string>> columns) { levels_.push_back(std::move(columns)); }
  // SELECT `what` FROM the nested levels.
  std::string select(const std::string& what) const {
    std::string inner;
    for (std::size_t i = 0; i < levels_.size(); ++i) {
      std::string list;
      for (const auto& [name, expression] : levels_[i]) list += (list.empty() ? "" : ", ") + expression + " AS " + name;
      if (i == 0) {
        inner = "SELECT " + list + (dialect_ == SqlDialect::ansi ? " FROM (VALUES (0)) AS plumb_one (plumb_zero)" : "");
      } else {
        const std::string t = "plumb_t" + std::to_string(i);
        inner = "SELECT " + t + ".*, " + list + " FROM (" + inner + ") AS " + t;
      }
    }
    const std::string t = "plumb_t" + std::to_string(levels_.size());
    return "SELECT " + what + " FROM (" + inner + ") AS " + t;
  }

 private:
  SqlDialect dialect_;
  std::vector<std::vector<std::pair<std::string, std::string>>> levels_;
};

std::string sum_of(const std::vector<std::string>& terms) {
  std::string out = terms[0];
  for (std::size_t j = 1; j < terms.size(); ++j) out = "(" + out + " + " + terms[j] + ")";
  return out;
}

std::string indexed(const std::string& stem, std::size_t j) { return stem + std::to_string(j); }

}  // namespace

std::string class_sql_export(const ClassCalibrationMap& map, const ClassSqlExportOptions& options) {
  const std::size_t k = map.k();
  if (options.score_columns.size() != k)
    throw Error(ErrorKind::internal, "class_sql_export: one score column per class");
  for (const std::string& column : options.score_columns) {
    for (const std::string_view name : knot_columns)
      if (column == name)
        throw Error(ErrorKind::usage, "a score column has the name of a knot table column", {}, column,
                    "a column named otherwise (rename it in a view)");
    if (column.empty() || column.rfind("plumb_", 0) == 0)
      throw Error(ErrorKind::usage, "a score column's name is empty or starts with plumb_ (the SQL's own names)", {},
                  column, "a column named otherwise (rename it in a view)");
  }
  if (options.knot_table.empty())
    throw Error(ErrorKind::usage, "an SQL name is empty", {}, {}, "a table name");
  if (!(options.sum_tolerance >= 0.0 && std::isfinite(options.sum_tolerance)))
    throw Error(ErrorKind::internal, "class_sql_export: the sum tolerance is negative or not finite");
  SqlExportOptions binary;
  binary.dialect = options.dialect;
  binary.knot_table = options.knot_table;
  binary.inline_max = options.inline_max;
  Writer w(binary);
  const bool probability = map.scale() == ClassScale::probability;
  std::vector<std::string> x(k);
  for (std::size_t j = 0; j < k; ++j)
    x[j] = options.dialect == SqlDialect::ansi ? "CAST(" + sql_name(options.score_columns[j]) + " AS DOUBLE PRECISION)"
                                                    : sql_name(options.score_columns[j]);
  // The row as apply checks it (class_row_problem).
  std::string valid;
  for (std::size_t j = 0; j < k; ++j) {
    valid += (valid.empty() ? "" : " AND ") +
             (probability ? x[j] + " >= " + w.num(0.0) + " AND " + x[j] + " <= " + w.num(1.0)
                          : x[j] + " >= " + w.num(-std::numeric_limits<double>::max()) + " AND " + x[j] + " <= " +
                                w.num(std::numeric_limits<double>::max()));
  }
  if (probability) valid += " AND abs(" + sum_of(x) + " - " + w.num(1.0) + ") <= " + w.num(options.sum_tolerance);

  const auto greatest = [&](const std::vector<std::string>& v) {
    std::string out = (options.dialect == SqlDialect::sqlite ? "max(" : "GREATEST(");
    for (std::size_t j = 0; j < v.size(); ++j) out += (j ? ", " : "") + v[j];
    return out + ")";
  };
  // exp of a value <= 0 held to [-exp_limit, 0] (PostgreSQL raises an error
  // on underflow): below it apply's term is at most 1e-304 of a sum >= 1.
  const auto exp_down = [&](const std::string& v) { return w.exp(w.greatest(v, w.num(-exp_limit))); };
  const auto names = [&](const std::string& stem) {
    std::vector<std::string> v(k);
    for (std::size_t j = 0; j < k; ++j) v[j] = indexed(stem, j);
    return v;
  };
  Levels levels(options.dialect);
  std::vector<std::string> finals(k);
  if (const auto* m = dynamic_cast<const ClassScalingMap*>(&map)) {
    // log_probabilities (src/core/class_map.cpp).
    if (probability) {
      std::vector<std::pair<std::string, std::string>> floored;
      for (std::size_t j = 0; j < k; ++j)
        floored.emplace_back(indexed("plumb_f", j), "CASE WHEN " + x[j] + " < " + w.num(class_probability_floor) +
                                                        " THEN " + w.num(class_probability_floor) + " ELSE " + x[j] +
                                                        " END");
      levels.add(floored);
      levels.add({{"plumb_ls", w.ln(sum_of(names("plumb_f")))}});
      std::vector<std::pair<std::string, std::string>> l;
      for (std::size_t j = 0; j < k; ++j)
        l.emplace_back(indexed("plumb_l", j), "(" + w.ln(indexed("plumb_f", j)) + " - plumb_ls)");
      levels.add(l);
    } else {
      std::vector<std::pair<std::string, std::string>> first;
      for (std::size_t j = 0; j < k; ++j) first.emplace_back(indexed("plumb_x", j), x[j]);
      first.emplace_back("plumb_m", greatest(x));
      levels.add(first);
      std::vector<std::string> terms;
      for (std::size_t j = 0; j < k; ++j) terms.push_back(exp_down("(" + indexed("plumb_x", j) + " - plumb_m)"));
      levels.add({{"plumb_lse", "(plumb_m + " + w.ln(sum_of(terms)) + ")"}});
      std::vector<std::pair<std::string, std::string>> l;
      for (std::size_t j = 0; j < k; ++j)
        l.emplace_back(indexed("plumb_l", j), "(" + indexed("plumb_x", j) + " - plumb_lse)");
      levels.add(l);
    }
    // The linear part.
    std::vector<std::pair<std::string, std::string>> eta;
    for (std::size_t c = 0; c < k; ++c) {
      std::string e;
      if (m->form() == ClassScalingMap::Form::temperature) {
        e = "(" + indexed("plumb_l", c) + " / " + w.num(m->temperature()) + ")";
      } else if (m->form() == ClassScalingMap::Form::vector) {
        e = "((" + w.num(m->matrix()[c * k + c]) + " * " + indexed("plumb_l", c) + ") + " + w.num(m->bias()[c]) + ")";
      } else {
        std::vector<std::string> products;
        for (std::size_t j = 0; j < k; ++j)
          products.push_back("(" + w.num(m->matrix()[c * k + j]) + " * " + indexed("plumb_l", j) + ")");
        e = "(" + sum_of(products) + " + " + w.num(m->bias()[c]) + ")";
      }
      eta.emplace_back(indexed("plumb_e", c), e);
    }
    levels.add(eta);
    // softmax, the largest value taken out first.
    levels.add({{"plumb_em", greatest(names("plumb_e"))}});
    std::vector<std::pair<std::string, std::string>> u;
    for (std::size_t j = 0; j < k; ++j) u.emplace_back(indexed("plumb_u", j), exp_down("(" + indexed("plumb_e", j) + " - plumb_em)"));
    levels.add(u);
    const std::string total = sum_of(names("plumb_u"));
    for (std::size_t c = 0; c < k; ++c) finals[c] = indexed("plumb_u", c) + " / " + total;
  } else if (const auto* m = dynamic_cast<const OneVsRestMap*>(&map)) {
    std::size_t pieces_all = 0;
    for (std::size_t j = 0; j < k; ++j) pieces_all += pieces(m->class_map(j));
    // SQLite's parser stack (100 deep) cannot hold the binary maps' nested
    // CASEs inside the nested steps: knot tables for any piecewise map there.
    w.use_tables = pieces_all > options.inline_max || (options.dialect == SqlDialect::sqlite && pieces_all > 0);
    // row_probabilities (src/core/maps/one_vs_rest_map.cpp).
    std::vector<std::pair<std::string, std::string>> first;
    for (std::size_t j = 0; j < k; ++j) first.emplace_back(indexed("plumb_x", j), x[j]);
    if (probability) {
      first.emplace_back("plumb_s", sum_of(x));
      levels.add(first);
    } else {
      first.emplace_back("plumb_m", greatest(x));
      levels.add(first);
      std::vector<std::pair<std::string, std::string>> u;
      for (std::size_t j = 0; j < k; ++j)
        u.emplace_back(indexed("plumb_u", j), exp_down("(" + indexed("plumb_x", j) + " - plumb_m)"));
      levels.add(u);
      levels.add({{"plumb_s", sum_of(names("plumb_u"))}});
    }
    std::vector<std::pair<std::string, std::string>> p;
    for (std::size_t j = 0; j < k; ++j)
      p.emplace_back(indexed("plumb_p", j), indexed(probability ? "plumb_x" : "plumb_u", j) + " / plumb_s");
    levels.add(p);
    // Each class's binary map, then the renormalisation (1/K when every value is 0).
    std::vector<std::pair<std::string, std::string>> q;
    for (std::size_t j = 0; j < k; ++j)
      q.emplace_back(indexed("plumb_q", j), w.probability(m->class_map(j), indexed("plumb_p", j)));
    levels.add(q);
    levels.add({{"plumb_qs", sum_of(names("plumb_q"))}});
    for (std::size_t c = 0; c < k; ++c)
      finals[c] = "CASE WHEN plumb_qs > " + w.num(0.0) + " THEN " + indexed("plumb_q", c) + " / plumb_qs ELSE " +
                  w.num(1.0 / static_cast<double>(k)) + " END";
  } else {
    throw Error(ErrorKind::usage, "no SQL form for " + kind_with_article(map.kind()) + " map", {},
                std::string(map.kind()), "temperature, vector, dirichlet or one_vs_rest");
  }

  std::string note = options.source_note.empty() ? kind_with_article(map.kind()) + " map" : options.source_note;
  for (char& c : note)
    if (c == '\n' || c == '\r') c = ' ';
  const auto one_line = [](std::string t) {
    for (char& c : t)
      if (c == '\n' || c == '\r') c = ' ';
    return t;
  };
  std::string classes;
  for (std::size_t j = 0; j < k; ++j)
    classes += (j ? ", " : "") + map.classes()[j] + " (" + sql_name(options.score_columns[j]) + ")";
  std::string out = "-- plumb: " + note + ", on " + std::string(to_string(map.scale())) + " scores of " +
                    std::to_string(k) + " classes.\n-- Classes and score columns, in order: " + one_line(classes) +
                    ".\n";
  out += probability ? "-- NULL for a row with a NULL score and for a row plumb apply refuses (a score below 0, above 1 "
                       "or not a number, or scores summing further than " +
                           shortest_text(options.sum_tolerance) + " from 1).\n"
                     : "-- NULL for a row with a NULL score and for a row plumb apply refuses (a score infinite or "
                       "not a number).\n";
  out += w.tables;
  {
    out += "-- The probabilities, a select list of " + std::to_string(k) + " columns named as plumb apply names them:\n";
    for (std::size_t c = 0; c < k; ++c)
      out += "CASE WHEN " + valid + " THEN (" + levels.select(finals[c]) + ") END AS " +
             one_line(sql_name(options.score_columns[c] + "_calibrated")) + (c + 1 < k ? ",\n" : "\n");
  }
  return out;
}

}  // namespace plumb::io
