// plumb export: a map artifact written as code that computes the same
// probabilities elsewhere (SQL for a warehouse table of scores).
#include <string>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "plumb/io/artifact.hpp"
#include "plumb/io/c_export.hpp"
#include "plumb/io/class_artifact.hpp"
#include "plumb/io/class_input.hpp"
#include "plumb/error.hpp"
#include "plumb/io/output.hpp"
#include "plumb/io/sql_export.hpp"

namespace plumb::cli {
namespace {

struct ExportOptions {
  std::string artifact;
  std::string sql;
  bool c = false;
  bool knot_options_given = false;  // --knot-table or --inline-max
  std::string score;     // empty: the artifact's score column
  std::string function;  // empty: plumb_calibrated
  std::string knot_table = "plumb_knots";
  std::size_t inline_max = 128;
  std::string output = "-";
};

// The SQL text, after refusing options that have no meaning for the dialect.
std::string sql_text(const ExportOptions& o, const Artifact& artifact) {
  io::SqlExportOptions sql;
  sql.dialect = *io::parse_sql_dialect(o.sql);
  if (sql.dialect == io::SqlDialect::postgresql && !o.score.empty())
    throw Error(ErrorKind::usage, "--score names the column of an expression, but --sql postgresql writes a function",
                {}, o.score, "the function applied to the column in a query, or --sql sqlite or ansi with --score");
  if (sql.dialect != io::SqlDialect::postgresql && !o.function.empty())
    throw Error(ErrorKind::usage, "--function names a function, but --sql " + o.sql + " writes an expression", {},
                o.function, "--sql postgresql with --function, or no --function");
  sql.score_column = o.score.empty() ? artifact.score_column : o.score;
  if (!o.function.empty()) sql.function_name = o.function;
  sql.knot_table = o.knot_table;
  sql.inline_max = o.inline_max;
  sql.source_note = kind_with_article(artifact.map->kind()) + " map from " + o.artifact + " (fitted on column '" +
                    artifact.score_column + "')";
  return io::sql_export(*artifact.map, sql);
}

std::string c_text(const ExportOptions& o, const Artifact& artifact) {
  if (!o.score.empty())
    throw Error(ErrorKind::usage, "--score names the column of an SQL expression, but --c writes a function of a double",
                {}, o.score, "--c without --score");
  if (o.knot_options_given)
    throw Error(ErrorKind::usage, "--knot-table and --inline-max shape the SQL, but --c writes C", {}, {},
                "--c without them, or --sql DIALECT");
  io::CExportOptions c;
  if (!o.function.empty()) c.function_name = o.function;
  c.source_note = kind_with_article(artifact.map->kind()) + " map from " + o.artifact + " (fitted on column '" +
                  artifact.score_column + "')";
  return io::c_export(*artifact.map, c);
}

// The sum tolerance apply uses for the artifact's rows without --sum-tolerance.
double class_sum_tolerance(const ClassArtifact& artifact) {
  if (artifact.fit_options.contains("sum_tolerance") && artifact.fit_options["sum_tolerance"].is_number())
    return artifact.fit_options["sum_tolerance"].get<double>();
  return io::default_sum_tolerance;
}

std::string class_note(const ExportOptions& o, const ClassArtifact& artifact) {
  std::string columns;
  for (const std::string& name : artifact.score_columns) columns += (columns.empty() ? "" : ", ") + name;
  return kind_with_article(artifact.map->kind()) + " map from " + o.artifact + " (fitted on columns " + columns + ")";
}

// A multi-class map as SQL: the expressions of the K score columns the map
// was fitted on, or a function of K arguments.
std::string class_sql_text(const ExportOptions& o, const ClassArtifact& artifact) {
  io::ClassSqlExportOptions sql;
  sql.dialect = *io::parse_sql_dialect(o.sql);
  if (!o.score.empty())
    throw Error(ErrorKind::usage, "--score names one score column, but a multi-class map reads the " +
                    std::to_string(artifact.map->k()) + " columns it was fitted on",
                {}, o.score, "no --score (rename the columns in a view to the map's names)");
  if (!o.function.empty())
    throw Error(ErrorKind::usage, "--function names a function, but --sql writes a select list for a multi-class map",
                {}, o.function, "no --function (or --c, which writes a function)");
  sql.score_columns = artifact.score_columns;
  sql.knot_table = o.knot_table;
  sql.inline_max = o.inline_max;
  sql.source_note = class_note(o, artifact);
  sql.sum_tolerance = class_sum_tolerance(artifact);
  return io::class_sql_export(*artifact.map, sql);
}

// A multi-class map as C: the function of the row's K scores.
std::string class_c_text(const ExportOptions& o, const ClassArtifact& artifact) {
  if (!o.score.empty())
    throw Error(ErrorKind::usage, "--score names the column of an SQL expression, but --c writes a function of a row",
                {}, o.score, "--c without --score");
  if (o.knot_options_given)
    throw Error(ErrorKind::usage, "--knot-table and --inline-max shape the SQL, but --c writes C", {}, {},
                "--c without them, or --sql DIALECT");
  io::ClassCExportOptions c;
  if (!o.function.empty()) c.function_name = o.function;
  c.source_note = class_note(o, artifact);
  c.sum_tolerance = class_sum_tolerance(artifact);
  return io::class_c_export(*artifact.map, c);
}

int run_export(const ExportOptions& o) {
  if (o.sql.empty() == !o.c)
    throw Error(ErrorKind::usage, o.c ? "--sql and --c were both given" : "no output language was given", {}, {},
                "--sql DIALECT (sqlite, postgresql or ansi) or --c");
  const ArtifactFile file = read_artifact_file(o.artifact);
  std::string text;
  if (file.multi_class) {
    const ClassArtifact artifact = class_artifact_from_text(file.text, file.name);
    text = o.c ? class_c_text(o, artifact) : class_sql_text(o, artifact);
  } else {
    const Artifact artifact = artifact_from_text(file.text, file.name);
    text = o.c ? c_text(o, artifact) : sql_text(o, artifact);
  }
  io::OutputFile out(o.output);
  out.write(text);
  out.commit();
  return 0;
}

}  // namespace

Command add_export_command(CLI::App& app) {
  auto o = std::make_shared<ExportOptions>();
  CLI::App* cmd = app.add_subcommand(
      "export", "Write a map artifact as SQL or C that gives apply's probabilities inside a database or a program");
  cmd->footer(
      "Give --sql DIALECT or --c. --sql sqlite and --sql ansi write an expression of the score column, to put\n"
      "in a SELECT; --sql postgresql writes CREATE OR REPLACE FUNCTION NAME(score double precision)\n"
      "(PostgreSQL 14 or later). The numbers agree with plumb apply to 1e-12 (SQL has no log1p, so\n"
      "ln(1 - q) stands in for it; isotonic and histogram maps repeat apply's arithmetic exactly). A map\n"
      "of more than --inline-max isotonic blocks or histogram bins is looked up in knot tables that the\n"
      "text creates and fills first (--knot-table, then _2, _3 for the folds of a fold average); larger\n"
      "inline maps are slow for PostgreSQL's JIT compiler to compile (SET jit = off avoids it). sqlite\n"
      "needs SQLite 3.35 or later built with its math functions (ln, exp), as Debian's sqlite3 is.\n"
      "Where apply refuses a score (not a number, infinite, outside [0, 1] for a map of probabilities)\n"
      "the SQL gives NULL, as it does for a NULL score: count the NULLs if that matters.\n\n"
      "--c writes double NAME(double score), which returns apply's probability bit for bit when compiled\n"
      "without -ffast-math and with -ffp-contract=off, and NaN where apply refuses the score.\n\n"
      "A multi-class map (plumb fit --scores) reads the K score columns it was fitted on: --sql (every\n"
      "dialect) writes a select list of K expressions named COLUMN_calibrated, as apply names them, to\n"
      "put in a SELECT; rows apply refuses give NULL. --c writes int NAME(const double score[K],\n"
      "double out[K]), bit for bit as above, which returns 1 and NaN in every out[j] for a row apply\n"
      "refuses.\n\n"
      "Examples:\n"
      "  plumb export --sql sqlite late.map.json -o late.sql\n"
      "  plumb export --sql postgresql --function p_late late.map.json | psql parcels\n"
      "  psql parcels -c 'SELECT parcel_id, p_late(risk) FROM tonight'\n"
      "  plumb export --sql ansi --score model_score late.map.json -o late.sql\n"
      "  plumb export --c --function p_late late.map.json -o p_late.c\n"
      "  plumb export --sql sqlite outcome.map.json -o outcome.sql\n\n"
      "The sqlite and ansi text holds its knot table's CREATE and INSERT statements first, if any; run\n"
      "them once, then put the expression after the line '-- The probability ...' in your SELECT.\n"
      "docs/library.md has the details and an example.");
  cmd->add_option("map", o->artifact, "Map artifact written by plumb fit or cross-fit (- reads standard input)")
      ->required();
  cmd->add_option("--sql", o->sql, "Write SQL of this dialect")
      ->check(CLI::IsMember({"sqlite", "postgresql", "ansi"}))
      ->option_text("DIALECT");
  cmd->add_option("--score", o->score,
                  "Column the expression reads (sqlite, ansi; default: the column the map was fitted on)")
      ->option_text("COLUMN");
  cmd->add_flag("--c", o->c, "Write a C function of the score instead (C99 and <math.h> only)");
  cmd->add_option("--function", o->function,
                  "Name of the function written (postgresql, --c; default: plumb_calibrated)")
      ->option_text("NAME");
  cmd->add_option("--knot-table", o->knot_table, "Name of the knot table of a large piecewise map")
      ->option_text("NAME")
      ->default_str("plumb_knots");
  cmd->add_option("--inline-max", o->inline_max,
                  "Most pieces (isotonic blocks and histogram bins, of all the folds of a fold average) written into "
                  "the SQL itself, as nested CASEs (a binary search); more use knot tables")
      ->option_text("N")
      ->check(CLI::Range(0, 1000000))
      ->default_str("128");
  cmd->add_option("-o,--output", o->output, "Where to write the SQL (- for standard output)")->default_str("-");
  return [o, cmd] {
    o->knot_options_given = cmd->count("--knot-table") > 0 || cmd->count("--inline-max") > 0;
    return run_export(*o);
  };
}

}  // namespace plumb::cli
