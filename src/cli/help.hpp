#pragma once
// plumb's own help screens and usage errors.
//
// The help of every command is laid out by HelpFormatter: a usage line,
// the inputs (positional arguments), the options, each name on its own line
// with its description indented below and wrapped to 80 columns, then the
// command's footer as written. What an option accepts is said in plain
// words, taken from the option itself (its validator, its default), so a
// list of choices is written once, where it is checked.
//
// Usage errors (a missing, unknown or invalid option; an unknown command)
// are one line on stderr, "plumb COMMAND: what is wrong: the fix", and exit
// with code 2.
#include <CLI/CLI.hpp>
#include <string>

namespace plumb::cli {

class HelpFormatter : public CLI::FormatterBase {
 public:
  // `name` is the command path, "plumb" or "plumb fit".
  std::string make_help(const CLI::App* app, std::string name, CLI::AppFormatMode mode) const override;
};

// What an option accepts, in plain words: "one of: width, mass; default:
// width", "a whole number from 1 to 10000; default: 10", "may be repeated".
// Empty when there is nothing to say (a flag without a default).
std::string value_hint(const CLI::Option& option);

// The choices an option's validator accepts ("width, mass"), or empty when it
// does not check against a list.
std::string choices_of(const CLI::Option& option);

// Handles what CLI11 raised while parsing argv for `app` (the top-level
// app): prints the help or version on stdout, or one usage line on stderr.
// Returns the exit code.
int handle_parse_error(CLI::App& app, const CLI::ParseError& error, int argc, char** argv);

// The command named on the command line ("fit"), or empty when none was.
std::string command_of(const CLI::App& app);

}  // namespace plumb::cli
