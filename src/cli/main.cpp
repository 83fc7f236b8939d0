// plumb: probability recalibration maps from the command line.
#include <CLI/CLI.hpp>
#include <cstdio>
#include <exception>
#include <map>
#include <memory>
#include <new>
#include <string>

#include "cli/commands.hpp"
#include "cli/help.hpp"
#include "plumb/error.hpp"
#include "plumb/version.hpp"

int main(int argc, char** argv) {
  CLI::App app{
      "plumb fits monotone recalibration maps on labelled hold-out scores, saves each map as a\n"
      "versioned JSON artifact, and applies it to score files in a pipeline.\n\n"
      "  plumb fit --map isotonic --score risk --label missed holdout.csv -o late.map.json\n"
      "  plumb apply late.map.json tonight.csv -o tonight.calibrated.csv\n"
      "  plumb cross-fit --map auto --score risk --label missed holdout.csv -o late.map.json\n"
      "  plumb report --score risk --map late.map.json --label missed holdout.csv --svg chart.svg\n"
      "  plumb inspect late.map.json\n"
      "  plumb adjust late.map.json --prior 0.30 -o late.peak.map.json\n"
      "  plumb tally --score risk --label missed part-0001.csv -o part-0001.tally.json\n"
      "  plumb merge part-*.tally.json -o all.tally.json\n"
      "  plumb export --sql postgresql late.map.json -o late_map.sql\n"
      "  plumb drift --map late.map.json --max psi=0.2 tonight.csv\n\n"
      "Run 'plumb COMMAND --help' for each command's options.",
      "plumb"};
  app.footer(
      "Exit codes: 0 ok, 1 internal error, 2 usage, 3 bad input data, 4 bad map artifact,\n"
      "5 file I/O, 6 data cannot support the fit, 7 a gate of plumb report or plumb drift failed.\n"
      "Errors are one line on stderr: FILE:LINE:COLUMN (column 'NAME'): what went wrong.");
  // Before the commands are added: each takes the formatter and help flag of the app.
  app.formatter(std::make_shared<plumb::cli::HelpFormatter>());
  app.set_help_flag("-h,--help", "Show this help");
  app.set_version_flag("--version", std::string("plumb ") + plumb::version_string, "Show plumb's version");
  app.require_subcommand(1);

  std::map<CLI::App*, plumb::cli::Command> commands;
  auto add = [&](plumb::cli::Command (*registrar)(CLI::App&)) {
    const std::size_t before = app.get_subcommands({}).size();
    plumb::cli::Command run = registrar(app);
    commands[app.get_subcommands({})[before]] = std::move(run);
  };
  add(plumb::cli::add_fit_command);
  add(plumb::cli::add_apply_command);
  add(plumb::cli::add_cross_fit_command);
  add(plumb::cli::add_report_command);
  add(plumb::cli::add_inspect_command);
  add(plumb::cli::add_adjust_command);
  add(plumb::cli::add_tally_command);
  add(plumb::cli::add_merge_command);
  add(plumb::cli::add_export_command);
  add(plumb::cli::add_drift_command);

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    return plumb::cli::handle_parse_error(app, e, argc, argv);
  }
  try {
    for (CLI::App* sub : app.get_subcommands()) return commands.at(sub)();
    return static_cast<int>(plumb::ErrorKind::usage);
  } catch (const plumb::Error& e) {
    // A usage error names the command it belongs to; errors in the data start with their location.
    const std::string command = plumb::cli::command_of(app);
    const std::string prefix =
        e.kind() == plumb::ErrorKind::usage && !command.empty() ? "plumb " + command + ": " : "plumb: ";
    std::fprintf(stderr, "%s%s\n", prefix.c_str(), plumb::format_error(e).c_str());
    return e.exit_code();
  } catch (const std::bad_alloc&) {
    std::fprintf(stderr, "plumb: out of memory\n");
    return static_cast<int>(plumb::ErrorKind::internal);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "plumb: internal error: %s\n", e.what());
    return static_cast<int>(plumb::ErrorKind::internal);
  }
}
