// The text report's layout (text_layout.hpp): the document of clipped
// lines and the plain table.
#include "text_layout.hpp"

#include <algorithm>

namespace plumb::text {

void Document::line(std::string_view s) { lines_.push_back(clip(s, p_.width, p_)); }

void Document::blank() {
  if (!lines_.empty() && !lines_.back().empty()) lines_.emplace_back();
}

void Document::heading(std::string_view title) {
  blank();
  const std::string text = p_.unicode ? "\u258c " + std::string(title) : "[" + std::string(title) + "]";
  line(p_.paint(clip(text, p_.width, p_), Tone::bold));
}

void Document::flow(const std::vector<std::string>& parts, std::string_view separator, std::size_t indent) {
  std::string current(indent, ' ');
  bool first = true;
  for (const std::string& part : parts) {
    const std::size_t need = visible_width(current) + (first ? 0 : visible_width(separator)) + visible_width(part);
    if (!first && need > p_.width) {
      line(current);
      current = std::string(indent, ' ') + part;
    } else {
      if (!first) current += separator;
      current += part;
    }
    first = false;
  }
  if (!first) line(current);
}

void Document::wrap(std::string_view text, std::string_view first, std::string_view next) {
  std::string current(first);
  bool empty = true;
  std::size_t i = 0;
  while (i < text.size()) {
    while (i < text.size() && text[i] == ' ') ++i;
    std::size_t j = text.find(' ', i);
    if (j == std::string_view::npos) j = text.size();
    if (i == j) break;
    const std::string_view word = text.substr(i, j - i);
    const std::size_t need = visible_width(current) + (empty ? 0 : 1) + visible_width(word);
    if (!empty && need > p_.width) {
      line(current);
      current = std::string(next);
      empty = true;
    }
    if (!empty) current += ' ';
    current += word;
    empty = false;
    i = j;
  }
  if (!empty) line(current);
}

std::string Document::text() const {
  std::string out;
  for (const std::string& l : lines_) {
    out += l;
    out += '\n';
  }
  return out;
}

void render_table(Document& doc, const Painter& p, std::vector<Column> columns, std::vector<Row> rows) {
  constexpr std::size_t indent = 2;
  constexpr std::size_t gap = 2;
  bool any_marker = false;
  for (const Row& r : rows) any_marker = any_marker || !r.marker.empty();
  const std::size_t marker_width = any_marker ? 2 : 0;

  std::vector<std::size_t> width(columns.size());
  std::vector<bool> shown(columns.size(), true);
  const auto measure = [&] {
    for (std::size_t c = 0; c < columns.size(); ++c) {
      width[c] = visible_width(columns[c].header);
      for (const Row& r : rows)
        if (c < r.cells.size()) width[c] = std::max(width[c], visible_width(r.cells[c]));
    }
  };
  const auto total = [&] {
    std::size_t t = indent + marker_width;
    bool first = true;
    for (std::size_t c = 0; c < columns.size(); ++c) {
      if (!shown[c]) continue;
      t += width[c] + (first ? 0 : gap);
      first = false;
    }
    return t;
  };
  measure();
  for (std::size_t c = 0; c < columns.size(); ++c) {
    if (columns[c].min_width == 0 || total() <= p.width) continue;
    const std::size_t excess = total() - p.width;
    const std::size_t target = std::max(columns[c].min_width, width[c] > excess ? width[c] - excess : 0);
    if (target < width[c]) {
      width[c] = target;
      columns[c].header = clip(columns[c].header, target, p);
      for (Row& r : rows)
        if (c < r.cells.size()) r.cells[c] = clip(r.cells[c], target, p);
    }
  }
  while (total() > p.width) {
    int worst = 0;
    std::size_t victim = columns.size();
    for (std::size_t c = 0; c < columns.size(); ++c)
      if (shown[c] && columns[c].drop_order > worst) {
        worst = columns[c].drop_order;
        victim = c;
      }
    if (victim == columns.size()) break;  // only essential columns left: clip
    shown[victim] = false;
  }

  const auto compose = [&](const std::vector<std::string>& cells, std::string_view tail, std::string_view marker) {
    std::string out(indent, ' ');
    if (any_marker) out += pad(marker, marker_width, false);
    bool first = true;
    std::size_t c = 0;
    for (; c < columns.size() && c < cells.size(); ++c) {
      if (!shown[c]) continue;
      if (!first) out += std::string(gap, ' ');
      out += pad(cells[c], width[c], columns[c].right_align);
      first = false;
    }
    if (!tail.empty()) {
      if (!first) out += std::string(gap, ' ');
      out += tail;
    }
    while (!out.empty() && out.back() == ' ') out.pop_back();
    return out;
  };

  std::vector<std::string> headers;
  for (const Column& col : columns) headers.push_back(col.header);
  doc.line(p.paint(compose(headers, "", ""), Tone::dim));
  for (const Row& r : rows) doc.line(p.paint(compose(r.cells, r.tail, r.marker), r.tone));
}

}  // namespace plumb::text
