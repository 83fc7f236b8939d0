// Load a map artifact once, then map scores given on the command line.
//   score_one late.map.json 0.12 0.5 0.93
#include <plumb/io/artifact.hpp>
#include <plumb/error.hpp>

#include <charconv>
#include <cstdio>
#include <cstdlib>
#include <string>

int main(int argc, char** argv) {
  if (argc < 2) {
    std::fprintf(stderr, "usage: score_one MAP.json SCORE...\n");
    return 2;
  }
  try {
    const plumb::Artifact artifact = plumb::load_artifact(argv[1]);
    for (int i = 2; i < argc; ++i) {
      const double p = (*artifact.map)(std::strtod(argv[i], nullptr));
      char text[32];
      const auto end = std::to_chars(text, text + sizeof text, p).ptr;
      std::printf("%s\n", std::string(text, end).c_str());
    }
  } catch (const plumb::Error& e) {
    std::fprintf(stderr, "%s\n", plumb::format_error(e).c_str());
    return e.exit_code();
  }
  return 0;
}
