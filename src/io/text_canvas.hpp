#pragma once
// A character canvas over the unit square [0, 1]^2: a small drawing surface
// for charts in a terminal (the reliability chart draws on it; a trend chart
// can too). Each cell holds what was drawn into it and the chart decides
// the glyph: two layers of braille dots (2 x 4 per cell, so lines are finer
// than the grid), an ASCII line character for terminals without Unicode, a
// shade flag and a mark number.
//
// Coordinates: cell column c sits at x = c / (columns - 1), cell row r at
// y = r / (rows - 1), row 0 at the bottom; points outside [0, 1] are clamped
// to the edge. Braille dot k across sits at cell position k/2 - 1/4 and dot
// j up at j/4 - 3/8 (cell centres at whole numbers).
#include <cstddef>
#include <cstdint>
#include <functional>
#include <string>
#include <vector>

namespace plumb::text {

struct CanvasCell {
  static constexpr std::size_t layers = 2;
  std::uint8_t dots[layers] = {0, 0};  // braille bits (U+2800 + bits), one set per layer
  char ascii = 0;                      // an ASCII line character, 0: none
  bool shade = false;
  int mark = 0;  // 0: none; the chart gives other numbers their meaning
};

class Canvas {
 public:
  // Precondition: columns >= 2 and rows >= 2.
  Canvas(std::size_t columns, std::size_t rows);

  std::size_t columns() const { return columns_; }
  std::size_t rows() const { return rows_; }
  CanvasCell& at(std::size_t column, std::size_t row) { return cells_[row * columns_ + column]; }
  const CanvasCell& at(std::size_t column, std::size_t row) const { return cells_[row * columns_ + column]; }

  // The cell nearest a point, and the point at a cell's centre.
  std::size_t column_of(double x) const { return nearest(x, columns_); }
  std::size_t row_of(double y) const { return nearest(y, rows_); }
  double x_of(std::size_t column) const { return static_cast<double>(column) / static_cast<double>(columns_ - 1); }
  double y_of(std::size_t row) const { return static_cast<double>(row) / static_cast<double>(rows_ - 1); }

  // Braille dots: dot_columns() across, dot_rows() up.
  std::size_t dot_columns() const { return 2 * columns_; }
  std::size_t dot_rows() const { return 4 * rows_; }
  double x_of_dot(std::size_t k) const;
  std::size_t dot_row_of(double y) const;
  void set_dot(std::size_t k, std::size_t j, std::size_t layer);

  // The curve y = f(x) in braille dots on `layer`, one dot every `step` dot
  // columns; with `join`, consecutive dots are joined by a vertical run (a
  // step function reads as solid). Where f is not finite nothing is drawn
  // and the next dot starts afresh.
  void trace_dots(const std::function<double(double)>& f, std::size_t layer, std::size_t step, bool join);
  // The same at cell resolution in ASCII: `level` at each cell of the curve
  // and, with a non-zero `riser`, that character on the cells between two
  // consecutive levels.
  void trace_cells(const std::function<double(double)>& f, char level, char riser);

 private:
  static std::size_t nearest(double t, std::size_t n);
  std::size_t columns_;
  std::size_t rows_;
  std::vector<CanvasCell> cells_;
};

// The braille character (U+2800 + bits) in UTF-8.
std::string braille(std::uint8_t bits);

}  // namespace plumb::text
