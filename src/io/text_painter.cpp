// The terminal painter (text_painter.hpp): ANSI tones and the column
// arithmetic of the text report.
#include "text_painter.hpp"

#include <algorithm>

namespace plumb::text {
namespace {

constexpr std::string_view kReset = "\x1b[0m";

std::string_view tone_code(Tone tone) {
  switch (tone) {
    case Tone::dim:
      return "\x1b[2m";
    case Tone::bold:
      return "\x1b[1m";
    case Tone::red:
      return "\x1b[31m";
    case Tone::green:
      return "\x1b[32m";
    case Tone::yellow:
      return "\x1b[33m";
    case Tone::cyan:
      return "\x1b[36m";
    case Tone::plain:
      break;
  }
  return "";
}

}  // namespace

Painter Painter::of(const TextStyle& style) {
  Painter p;
  p.unicode = style.unicode;
  p.colour = style.colour;
  p.width = static_cast<std::size_t>(std::max(style.width, 1));
  return p;
}

std::string Painter::paint(std::string_view s, Tone tone) const {
  if (!colour || tone == Tone::plain || s.empty()) return std::string(s);
  std::string out(tone_code(tone));
  out += s;
  out += kReset;
  return out;
}

std::size_t visible_width(std::string_view s) {
  std::size_t n = 0;
  for (std::size_t i = 0; i < s.size(); ++i) {
    const auto c = static_cast<unsigned char>(s[i]);
    if (c == 0x1b) {
      // CSI: ESC '[' parameters, then one final byte in 0x40..0x7e.
      if (i + 1 < s.size() && s[i + 1] == '[') {
        i += 2;
        while (i < s.size() && !(s[i] >= 0x40 && s[i] <= 0x7e)) ++i;
      }
      continue;
    }
    if ((c & 0xC0) != 0x80) ++n;
  }
  return n;
}

std::string clip(std::string_view s, std::size_t width, const Painter& p) {
  if (visible_width(s) <= width) return std::string(s);
  std::string out;
  bool escaped = false;
  std::size_t n = 0;
  const std::size_t keep = width == 0 ? 0 : width - 1;
  for (std::size_t i = 0; i < s.size(); ++i) {
    const auto c = static_cast<unsigned char>(s[i]);
    if (c == 0x1b) {
      std::size_t j = i + 1;
      if (j < s.size() && s[j] == '[') {
        ++j;
        while (j < s.size() && !(s[j] >= 0x40 && s[j] <= 0x7e)) ++j;
      }
      out.append(s.substr(i, j + 1 - i));
      escaped = true;
      i = j;
      continue;
    }
    if ((c & 0xC0) != 0x80) {
      if (n == keep) break;
      ++n;
    }
    out.push_back(static_cast<char>(c));
  }
  if (width > 0) out += p.ellipsis();
  if (escaped) out += kReset;
  return out;
}

std::string pad(std::string_view s, std::size_t width, bool right_align) {
  const std::size_t w = visible_width(s);
  if (w >= width) return std::string(s);
  const std::string fill(width - w, ' ');
  return right_align ? fill + std::string(s) : std::string(s) + fill;
}

}  // namespace plumb::text
