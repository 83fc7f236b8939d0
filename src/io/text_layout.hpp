#pragma once
// The text report's layout: a document of lines, each clipped to the
// painter's width on the way in (so no line can exceed it, whatever a
// section computes, even for names or paths longer than the terminal),
// with section headings, flowed lists and word-wrapped prose; and a plain
// table whose columns shrink or drop to fit the width.
#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

#include "text_painter.hpp"

namespace plumb::text {

class Document {
 public:
  explicit Document(const Painter& p) : p_(p) {}

  void line(std::string_view s);
  // A blank line, unless the last line is blank already (or there is none).
  void blank();
  // A section title: a blank line, then a heavy left bar and the title in
  // bold ("[title]" in ASCII). Nothing runs to the right edge.
  void heading(std::string_view title);
  // Parts joined by `separator`, wrapped onto further lines (indented by
  // `indent`) where the next part would not fit.
  void flow(const std::vector<std::string>& parts, std::string_view separator, std::size_t indent);
  // Word-wrapped prose: `first` prefixes the first line, `next` the others.
  void wrap(std::string_view text, std::string_view first, std::string_view next);
  // The lines, each ended by '\n'.
  std::string text() const;

 private:
  const Painter& p_;
  std::vector<std::string> lines_;
};

// A column of a plain table. Columns that do not fit are dropped, least
// important first, after the one shrinkable column (names of segments or
// score columns) has been cut down to its minimum.
struct Column {
  std::string header;
  bool right_align = true;
  int drop_order = 0;         // 0: never dropped; higher numbers go first
  std::size_t min_width = 0;  // > 0: may be cut down to this many columns
};

struct Row {
  std::vector<std::string> cells;  // may be shorter than the columns: then `tail` follows
  std::string tail;                // free text after the cells (e.g. "too few rows")
  Tone tone = Tone::plain;
  std::string marker;  // one column in front of the row ("!" for flags)
};

// The table, indented by 2, columns 2 apart, the header dim.
void render_table(Document& doc, const Painter& p, std::vector<Column> columns, std::vector<Row> rows);

}  // namespace plumb::text
