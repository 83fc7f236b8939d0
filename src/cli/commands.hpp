#pragma once
// Each subcommand lives in its own file and registers itself on the app.
// A registration returns the function that runs the subcommand once CLI11
// has parsed the command line; it returns the process exit code.
#include <CLI/CLI.hpp>
#include <functional>

namespace plumb::cli {

using Command = std::function<int()>;

Command add_fit_command(CLI::App& app);
Command add_apply_command(CLI::App& app);
Command add_inspect_command(CLI::App& app);
Command add_report_command(CLI::App& app);
Command add_cross_fit_command(CLI::App& app);
Command add_tally_command(CLI::App& app);
Command add_merge_command(CLI::App& app);
Command add_adjust_command(CLI::App& app);
Command add_export_command(CLI::App& app);
Command add_drift_command(CLI::App& app);

}  // namespace plumb::cli
