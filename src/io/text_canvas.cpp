// The character canvas (text_canvas.hpp).
#include "text_canvas.hpp"

#include <algorithm>
#include <cmath>

namespace plumb::text {

Canvas::Canvas(std::size_t columns, std::size_t rows) : columns_(columns), rows_(rows), cells_(columns * rows) {}

std::size_t Canvas::nearest(double t, std::size_t n) {
  const double v = std::clamp(t, 0.0, 1.0) * static_cast<double>(n - 1);
  return std::min(n - 1, static_cast<std::size_t>(std::lround(v)));
}

// The nearest dot to a point is floor(2u + 1) across and floor(4v + 2) up,
// u and v in cell units.
double Canvas::x_of_dot(std::size_t k) const {
  return std::clamp((static_cast<double>(k) / 2.0 - 0.25) / static_cast<double>(columns_ - 1), 0.0, 1.0);
}

std::size_t Canvas::dot_row_of(double y) const {
  const double v = std::clamp(y, 0.0, 1.0) * static_cast<double>(rows_ - 1);
  return std::min(dot_rows() - 1, static_cast<std::size_t>(std::floor(4.0 * v + 2.0)));
}

void Canvas::set_dot(std::size_t k, std::size_t j, std::size_t layer) {
  // Braille bit of (dot column within the cell, dot row from the cell's top).
  static constexpr std::uint8_t bits[2][4] = {{0x01, 0x02, 0x04, 0x40}, {0x08, 0x10, 0x20, 0x80}};
  at(k / 2, j / 4).dots[layer] |= bits[k % 2][3 - j % 4];
}

void Canvas::trace_dots(const std::function<double(double)>& f, std::size_t layer, std::size_t step, bool join) {
  bool have_previous = false;
  std::size_t previous = 0;
  for (std::size_t k = 0; k < dot_columns(); k += step) {
    const double v = f(x_of_dot(k));
    if (!std::isfinite(v)) {
      have_previous = false;
      continue;
    }
    const std::size_t j = dot_row_of(v);
    if (join && have_previous)
      for (std::size_t m = std::min(j, previous); m <= std::max(j, previous); ++m) set_dot(k, m, layer);
    set_dot(k, j, layer);
    have_previous = true;
    previous = j;
  }
}

void Canvas::trace_cells(const std::function<double(double)>& f, char level, char riser) {
  bool have_previous = false;
  std::size_t previous = 0;
  for (std::size_t c = 0; c < columns_; ++c) {
    const double v = f(x_of(c));
    if (!std::isfinite(v)) {
      have_previous = false;
      continue;
    }
    const std::size_t r = row_of(v);
    if (riser != 0 && have_previous)
      for (std::size_t m = std::min(r, previous) + 1; m < std::max(r, previous); ++m) at(c, m).ascii = riser;
    at(c, r).ascii = level;
    have_previous = true;
    previous = r;
  }
}

std::string braille(std::uint8_t bits) {
  const std::uint32_t cp = 0x2800u + bits;
  std::string out;
  out.push_back(static_cast<char>(0xE0 | (cp >> 12)));
  out.push_back(static_cast<char>(0x80 | ((cp >> 6) & 0x3F)));
  out.push_back(static_cast<char>(0x80 | (cp & 0x3F)));
  return out;
}

}  // namespace plumb::text
