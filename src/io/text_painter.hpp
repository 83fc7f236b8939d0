#pragma once
// The terminal painter of the text report: what the terminal can show
// (Unicode or ASCII glyphs, ANSI colour or none, a width in columns) and the
// width arithmetic every line goes through. It owns colour, width and the
// glyphs that differ between Unicode and ASCII; it does not read the
// environment (the CLI decides colour from the terminal and NO_COLOR and
// passes it in TextStyle).
//
// Width is counted in code points, and every glyph the report uses is one
// column wide in a Western terminal (braille, box drawing, block elements, a
// few Latin-1 signs), so counting code points is counting columns. ANSI
// escapes take no column.
#include <cstddef>
#include <string>
#include <string_view>

#include "plumb/io/report_render.hpp"

namespace plumb::text {

enum class Tone { plain, dim, bold, red, green, yellow, cyan };

struct Painter {
  bool unicode = true;
  bool colour = false;
  std::size_t width = 80;  // at least 1

  static Painter of(const TextStyle& style);

  // `s` in `tone` (an ANSI escape and a reset), or as it is without colour.
  std::string paint(std::string_view s, Tone tone) const;
  std::string_view ellipsis() const { return unicode ? "\u2026" : "~"; }
  std::string_view rule() const { return unicode ? "\u2500" : "-"; }
  std::string_view dot_sep() const { return unicode ? " \u00b7 " : ", "; }
};

// Terminal columns of s: one per code point, escape sequences excluded.
std::size_t visible_width(std::string_view s);

// s cut to `width` columns, ending in the painter's ellipsis when something
// was cut. Escape sequences are kept (they take no column) and a reset is
// appended so a cut never leaves a colour running into the next line.
std::string clip(std::string_view s, std::size_t width, const Painter& p);

// s padded with spaces to `width` columns, on the left when right_align;
// never cut.
std::string pad(std::string_view s, std::size_t width, bool right_align);

}  // namespace plumb::text
