// plumb: probability recalibration maps from the command line.
#include <CLI/CLI.hpp>
#include <cstdio>
#include <exception>
#include <iostream>
#include <map>
#include <string>

#include "cli/commands.hpp"
#include "plumb/error.hpp"
#include "plumb/version.hpp"

int main(int argc, char** argv) {
  CLI::App app{
      "plumb fits monotone recalibration maps on labelled hold-out scores, saves each map as a\n"
      "versioned JSON artifact, and applies it to score files in a pipeline.\n\n"
      "  plumb fit --map isotonic --score risk --label missed holdout.csv -o late.map.json\n"
      "  plumb apply late.map.json tonight.csv -o tonight.calibrated.csv\n"
      "  plumb inspect late.map.json\n\n"
      "Exit codes: 0 ok, 1 internal error, 2 usage, 3 bad input data, 4 bad map artifact,\n"
      "5 file I/O, 6 data cannot support the fit, 7 a --max threshold was exceeded.",
      "plumb"};
  app.set_version_flag("--version", std::string("plumb ") + plumb::version_string);
  app.require_subcommand(1);
  app.fallthrough(false);

  std::map<CLI::App*, plumb::cli::Command> commands;
  (void)commands;
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    return app.exit(e) == 0 ? 0 : static_cast<int>(plumb::ErrorKind::usage);
  }
  return 0;
}
