// The character canvas of the text report (src/io/text_canvas.hpp): braille
// dots land in the cell and bit the Unicode Braille Patterns block gives
// them (U+2800 + bits; dots 1-2-3-7 down the left column are bits 0x01,
// 0x02, 0x04, 0x40, dots 4-5-6-8 down the right 0x08, 0x10, 0x20, 0x80;
// The Unicode Standard, chart U+2800..U+28FF), and traced lines pass
// through the cells their points fall in.
#include <catch2/catch.hpp>

#include <cmath>

#include "io/text_canvas.hpp"

using plumb::text::Canvas;

TEST_CASE("braille: U+2800 plus the dot bits, in UTF-8", "[text_canvas]") {
  CHECK(plumb::text::braille(0x00) == "\u2800");
  CHECK(plumb::text::braille(0x01) == "\u2801");
  CHECK(plumb::text::braille(0xFF) == "\u28ff");
  CHECK(plumb::text::braille(0x47) == "\u2847");  // the whole left column
}

TEST_CASE("set_dot: dot rows count up from the bottom, bits as the braille block", "[text_canvas]") {
  Canvas c(2, 2);
  REQUIRE(c.dot_columns() == 4);
  REQUIRE(c.dot_rows() == 8);
  c.set_dot(0, 7, 0);  // top left dot of the top left cell: dot 1
  CHECK(c.at(0, 1).dots[0] == 0x01);
  c.set_dot(1, 0, 0);  // bottom right dot of the bottom left cell: dot 8
  CHECK(c.at(0, 0).dots[0] == 0x80);
  c.set_dot(3, 4, 1);  // bottom right of the top right cell, on the other layer
  CHECK(c.at(1, 1).dots[1] == 0x80);
  CHECK(c.at(1, 1).dots[0] == 0x00);
}

TEST_CASE("cell coordinates: corners, centres and clamping", "[text_canvas]") {
  Canvas c(61, 21);
  CHECK(c.column_of(0.0) == 0);
  CHECK(c.column_of(1.0) == 60);
  CHECK(c.column_of(0.25) == 15);
  CHECK(c.row_of(0.75) == 15);
  CHECK(c.column_of(-3.0) == 0);
  CHECK(c.row_of(7.0) == 20);
  CHECK(c.x_of(30) == 0.5);
  CHECK(c.y_of(20) == 1.0);
}

TEST_CASE("trace: a line goes through the cells of its points; gaps where f is not finite", "[text_canvas]") {
  Canvas c(11, 11);
  c.trace_cells([](double x) { return x; }, '.', 0);
  for (std::size_t k = 0; k < 11; ++k) CHECK(c.at(k, k).ascii == '.');
  Canvas s(11, 11);
  // A step from 0.2 to 0.8 at x = 0.5, undefined above 0.9.
  s.trace_cells([](double x) { return x > 0.9 ? std::nan("") : x < 0.5 ? 0.2 : 0.8; }, '-', '|');
  CHECK(s.at(4, 2).ascii == '-');
  CHECK(s.at(5, 8).ascii == '-');
  for (std::size_t r = 3; r < 8; ++r) CHECK(s.at(5, r).ascii == '|');
  CHECK(s.at(10, 8).ascii == 0);
  Canvas d(11, 11);
  d.trace_dots([](double) { return 0.5; }, 1, 1, true);
  for (std::size_t k = 0; k < 11; ++k) CHECK(d.at(k, 5).dots[1] != 0);
  CHECK(d.at(3, 4).dots[1] == 0);
}
