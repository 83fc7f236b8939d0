#include "cli/help.hpp"

#include <algorithm>
#include <cctype>
#include <cstdio>
#include <string_view>
#include <utility>
#include <vector>

#include "plumb/error.hpp"

namespace plumb::cli {
namespace {

constexpr std::size_t page_width = 80;
constexpr std::string_view name_indent = "  ";
constexpr std::string_view text_indent = "      ";

// `text` wrapped to page_width, every line starting with `indent`; the
// line breaks it holds are kept.
std::string wrapped(std::string_view text, std::string_view indent) {
  std::string out;
  std::size_t start = 0;
  while (start <= text.size()) {
    const std::size_t nl = text.find('\n', start);
    const std::string_view line =
        text.substr(start, nl == std::string_view::npos ? std::string_view::npos : nl - start);
    std::string current(indent);
    bool empty = true;
    std::size_t p = 0;
    while (p < line.size()) {
      while (p < line.size() && line[p] == ' ') ++p;
      if (p >= line.size()) break;
      std::size_t q = line.find(' ', p);
      if (q == std::string_view::npos) q = line.size();
      const std::string_view word = line.substr(p, q - p);
      if (!empty && current.size() + 1 + word.size() > page_width) {
        out += current + "\n";
        current.assign(indent);
        empty = true;
      }
      if (!empty) current += ' ';
      current += word;
      empty = false;
      p = q;
    }
    out += (empty ? std::string() : current) + "\n";
    if (nl == std::string_view::npos) break;
    start = nl + 1;
  }
  return out;
}

// Text as written in a description or footer, laid out for the page:
// lines that start with a space (examples, tables) are kept as they are;
// runs of other lines are paragraphs, joined and wrapped.
std::string reflowed(std::string_view text) {
  std::string out, paragraph;
  auto flush = [&] {
    if (!paragraph.empty()) out += wrapped(paragraph, "");
    paragraph.clear();
  };
  std::size_t start = 0;
  while (start <= text.size()) {
    const std::size_t nl = text.find('\n', start);
    const std::string_view line =
        text.substr(start, nl == std::string_view::npos ? std::string_view::npos : nl - start);
    if (line.empty() || line.front() == ' ') {
      flush();
      out += std::string(line) + "\n";
    } else {
      paragraph += (paragraph.empty() ? "" : " ") + std::string(line);
    }
    if (nl == std::string_view::npos) break;
    start = nl + 1;
  }
  flush();
  return out;
}

std::string upper(std::string text) {
  for (char& c : text) c = static_cast<char>(std::toupper(static_cast<unsigned char>(c)));
  return text;
}

std::string lower_first(std::string text) {
  if (text.size() > 1 && std::isupper(static_cast<unsigned char>(text[0])) &&
      !std::isupper(static_cast<unsigned char>(text[1])))
    text[0] = static_cast<char>(std::tolower(static_cast<unsigned char>(text[0])));
  return text;
}

// The descriptions of the option's validators, in the order they were given.
std::vector<std::string> validator_descriptions(const CLI::Option& option) {
  std::vector<std::string> out;
  // CLI11 only hands out validators from a non-const option; nothing is changed.
  auto& o = const_cast<CLI::Option&>(option);
  for (int i = 0;; ++i) {
    try {
      const CLI::Validator* v = o.get_validator(i);
      if (v != nullptr && !v->get_description().empty()) out.push_back(v->get_description());
    } catch (const CLI::OptionNotFound&) {
      break;
    }
  }
  return out;
}

// A validator's description in plain words: a set of choices "{a,b}", a
// range "INT in [1 - 10]"; anything else as it is.
struct Accepts {
  std::string choices;  // "a, b" for a set
  std::string words;    // what the value may be
};

Accepts plain(const std::string& description) {
  Accepts a;
  if (description.size() >= 2 && description.front() == '{' && description.back() == '}') {
    for (char c : description.substr(1, description.size() - 2))
      a.choices += c == ',' ? std::string(", ") : std::string(1, c);
    a.words = "one of: " + a.choices;
    return a;
  }
  const auto in = description.find(" in [");
  const auto dash = description.find(" - ", in == std::string::npos ? 0 : in);
  if (in != std::string::npos && dash != std::string::npos && description.back() == ']') {
    const std::string type = description.substr(0, in);
    const std::string lo = description.substr(in + 5, dash - in - 5);
    const std::string hi = description.substr(dash + 3, description.size() - dash - 4);
    const bool whole = type == "INT" || type == "UINT";
    a.words = std::string(whole ? "a whole number" : "a number") + " from " + lo + " to " + hi;
    return a;
  }
  a.words = description;
  return a;
}

// What a value of this option is, from its C++ type, when nothing better is known.
std::string base_words(const CLI::Option& option) {
  const std::string type = option.get_type_name();
  if (type.rfind("UINT", 0) == 0) return "a whole number >= 0";
  if (type.rfind("INT", 0) == 0) return "a whole number";
  if (type.rfind("FLOAT", 0) == 0) return "a number";
  return {};
}

bool is_flag(const CLI::Option& option) { return option.get_expected_max() == 0; }

// What a value stands for, by option name: the same word on every command.
// (The map kinds' options carry their own, from the map registry.)
std::string_view value_word(std::string_view long_name) {
  static constexpr std::pair<std::string_view, std::string_view> words[] = {
      {"score", "COLUMN"},   {"label", "COLUMN"},   {"weight", "COLUMN"}, {"by", "COLUMN"},  {"output", "FILE"},
      {"json", "FILE"},      {"svg", "FILE"},       {"markdown", "FILE"}, {"tally", "FILE"}, {"oof", "FILE"},
      {"positive", "VALUE"}, {"negative", "VALUE"}, {"sep", "CHAR"},      {"as", "NAME"},
      {"map-score", "COLUMN"}, {"max", "METRIC=VALUE"}, {"min", "METRIC=VALUE"}, {"missing", "POLICY"},
      {"binning", "KIND"},
      {"final", "WHICH"}, {"split", "RULE"}, {"reference", "FILE"}, {"reference-tally", "FILE"},
  };
  for (const auto& [name, word] : words)
    if (name == long_name) return word;
  return {};
}

// The option's own text when it was given one; a word by its name; "N" for
// numbers; else its name in capitals.
std::string metavar(const CLI::Option& option) {
  if (!option.get_option_text().empty()) return option.get_option_text();
  if (option.get_positional()) return upper(option.get_name(true));
  if (!option.get_lnames().empty() && !value_word(option.get_lnames().front()).empty())
    return std::string(value_word(option.get_lnames().front()));
  for (const std::string& d : validator_descriptions(option))
    if (plain(d).choices.empty() && d.find(" in [") != std::string::npos) return "N";
  if (!base_words(option).empty()) return "N";
  const std::vector<std::string>& longs = option.get_lnames();
  return upper(longs.empty() ? option.get_single_name() : longs.front());
}

// "-o, --output FILE", "--ascii", "FILE".
std::string shown_name(const CLI::Option& option) {
  if (option.get_positional()) {
    std::string name = metavar(option);
    if (option.get_expected_max() > 1) name += "...";
    return name;
  }
  std::string names;
  for (const std::string& s : option.get_snames()) names += (names.empty() ? "-" : ", -") + s;
  for (const std::string& l : option.get_lnames()) names += (names.empty() ? "--" : ", --") + l;
  if (!is_flag(option)) names += " " + metavar(option);
  return names;
}

// The name of an option as the user types it: "--map", "-o", or "MAP".
std::string typed_name(const CLI::Option& option) {
  if (option.get_positional()) return metavar(option);
  if (!option.get_lnames().empty()) return "--" + option.get_lnames().front();
  return "-" + option.get_snames().front();
}

bool shown(const CLI::Option* o) { return !o->get_group().empty(); }

std::string usage_line(const CLI::App* app, const std::string& name) {
  std::string line = name;
  if (!app->get_subcommands({}).empty()) line += " COMMAND";
  line += " [options]";
  for (const CLI::Option* o : app->get_options([](const CLI::Option* o) { return o->get_positional() && shown(o); })) {
    const std::string n = metavar(*o) + (o->get_expected_max() > 1 ? "..." : "");
    line += " " + (o->get_required() ? n : "[" + n + "]");
  }
  return line;
}

std::string command_list(const CLI::App& app) {
  std::string list;
  for (const CLI::App* sub : app.get_subcommands({})) list += (list.empty() ? "" : ", ") + sub->get_name();
  return list;
}

// The one line of a usage error, and its exit code.
int usage_error(const std::string& text) {
  std::fprintf(stderr, "%s\n", text.c_str());
  return static_cast<int>(ErrorKind::usage);
}

// The option of `app` whose name appears in `message` (the longest such), or null.
const CLI::Option* option_named_in(const CLI::App& app, const std::string& message) {
  const CLI::Option* best = nullptr;
  std::size_t best_length = 0;
  for (const CLI::Option* o : app.get_options()) {
    std::vector<std::string> names;
    for (const std::string& l : o->get_lnames()) names.push_back("--" + l);
    for (const std::string& s : o->get_snames()) names.push_back("-" + s);
    if (o->get_positional()) names.push_back(o->get_name(true));
    for (const std::string& n : names) {
      const auto at = message.find(n);
      if (at == std::string::npos || n.size() <= best_length) continue;
      // A whole word only: "--bins" is not found in "--binning".
      const std::size_t end = at + n.size();
      if (end < message.size() && (std::isalnum(static_cast<unsigned char>(message[end])) || message[end] == '-'))
        continue;
      best = o;
      best_length = n.size();
    }
  }
  return best;
}

}  // namespace

std::string choices_of(const CLI::Option& option) {
  for (const std::string& d : validator_descriptions(option))
    if (const Accepts a = plain(d); !a.choices.empty()) return a.choices;
  return {};
}

std::string value_hint(const CLI::Option& option) {
  std::vector<std::string> parts;
  const std::vector<std::string> descriptions = validator_descriptions(option);
  for (const std::string& d : descriptions) parts.push_back(plain(d).words);
  if (descriptions.empty() && !is_flag(option) && !base_words(option).empty()) parts.push_back(base_words(option));
  if (!is_flag(option) && !option.get_default_str().empty()) parts.push_back("default: " + option.get_default_str());
  if (option.get_required()) parts.push_back("required");
  if (!option.get_positional() && option.get_expected_max() > 1) parts.push_back("may be given more than once");
  std::string out;
  for (const std::string& p : parts) out += (out.empty() ? "" : "; ") + p;
  return out;
}

std::string HelpFormatter::make_help(const CLI::App* app, std::string name, CLI::AppFormatMode) const {
  std::string out;
  if (!app->get_description().empty()) out += reflowed(app->get_description()) + "\n";
  out += "usage\n" + wrapped(usage_line(app, name), name_indent);

  const auto subs = app->get_subcommands({});
  if (!subs.empty()) {
    std::size_t width = 0;
    for (const CLI::App* s : subs) width = std::max(width, s->get_name().size());
    out += "\ncommands\n";
    for (const CLI::App* s : subs) {
      std::string head = std::string(name_indent) + s->get_name();
      head.resize(name_indent.size() + width + 2, ' ');
      // The description continues under itself when it wraps.
      const std::string body = wrapped(s->get_description(), std::string(head.size(), ' '));
      out += head + body.substr(head.size());
    }
  }

  auto section = [&](const char* heading, bool positional) {
    const auto options =
        app->get_options([positional](const CLI::Option* o) { return shown(o) && o->get_positional() == positional; });
    if (options.empty()) return;
    out += std::string("\n") + heading + "\n";
    for (const CLI::Option* o : options) {
      out += std::string(name_indent) + shown_name(*o) + "\n";
      if (!o->get_description().empty()) out += wrapped(o->get_description(), text_indent);
      const std::string hint = value_hint(*o);
      if (!hint.empty()) out += wrapped(hint, text_indent);
    }
  };
  section("input", true);
  section("options", false);

  if (!app->get_footer().empty()) out += "\n" + reflowed(app->get_footer());
  return out;
}

std::string command_of(const CLI::App& app) {
  const auto parsed = app.get_subcommands();
  return parsed.empty() ? std::string() : parsed.front()->get_name();
}

int handle_parse_error(CLI::App& app, const CLI::ParseError& error, int argc, char** argv) {
  if (dynamic_cast<const CLI::CallForHelp*>(&error) != nullptr ||
      dynamic_cast<const CLI::CallForAllHelp*>(&error) != nullptr) {
    std::fputs(app.help().c_str(), stdout);
    return 0;
  }
  if (dynamic_cast<const CLI::CallForVersion*>(&error) != nullptr) {
    std::printf("%s\n", error.what());
    return 0;
  }

  const auto parsed = app.get_subcommands();
  if (parsed.empty()) {
    if (argc <= 1) {
      // Bare `plumb`: the help, and the usage exit code, so a script that
      // lost its arguments still fails.
      std::fputs(app.help().c_str(), stdout);
      return static_cast<int>(ErrorKind::usage);
    }
    const std::string first = argv[1];
    if (!first.empty() && first[0] == '-')
      return usage_error("plumb: unknown option '" + first + "': a command comes first, one of: " + command_list(app) +
                         " (see plumb --help)");
    return usage_error("plumb: unknown command '" + first + "': the commands are " + command_list(app) +
                       " (see plumb --help)");
  }

  const CLI::App& sub = *parsed.front();
  const std::string prefix = "plumb " + sub.get_name() + ": ";
  const std::string see = " (see plumb " + sub.get_name() + " --help)";

  if (dynamic_cast<const CLI::RequiredError*>(&error) != nullptr) {
    for (const CLI::Option* o : sub.get_options())
      if (o->get_required() && o->count() == 0) {
        std::string fix = "give " + (o->get_positional() ? metavar(*o) : typed_name(*o) + " " + metavar(*o));
        const std::string choices = choices_of(*o);
        if (!choices.empty())
          fix += ", one of: " + choices;
        else if (!o->get_description().empty())
          fix += ", " + lower_first(o->get_description());
        return usage_error(prefix + typed_name(*o) + " is required: " + fix + see);
      }
  }

  if (dynamic_cast<const CLI::ExtrasError*>(&error) != nullptr) {
    std::vector<std::string> extras = sub.remaining();
    if (extras.empty()) extras = app.remaining();
    const std::string first = extras.empty() ? std::string() : extras.front();
    if (!first.empty() && first[0] == '-' && first.size() > 1)
      return usage_error(prefix + "unknown option '" + first + "'" + see);
    std::string takes;
    for (const CLI::Option* o : sub.get_options([](const CLI::Option* o) { return o->get_positional() && shown(o); }))
      takes += " " + (o->get_required() ? metavar(*o) : "[" + metavar(*o) + "]");
    return usage_error(prefix + "unexpected argument '" + first + "': " + sub.get_name() +
                       (takes.empty() ? " takes no file names" : " takes" + takes) + see);
  }

  if (const CLI::Option* o = option_named_in(sub, error.what())) {
    std::string accepts;
    for (const std::string& d : validator_descriptions(*o)) accepts += (accepts.empty() ? "" : "; ") + plain(d).words;
    if (accepts.empty()) accepts = base_words(*o);
    if (accepts.empty()) accepts = lower_first(o->get_description());
    if (dynamic_cast<const CLI::ArgumentMismatch*>(&error) != nullptr || o->results().empty())
      return usage_error(prefix + typed_name(*o) + " needs a value: " + accepts + see);
    return usage_error(prefix + typed_name(*o) + " got '" + o->results().back() + "': expected " + accepts + see);
  }

  // Anything else CLI11 may raise: its words, in one line, with the way to the help.
  std::string what = error.what();
  std::replace(what.begin(), what.end(), '\n', ' ');
  return usage_error(prefix + lower_first(what) + see);
}

}  // namespace plumb::cli
