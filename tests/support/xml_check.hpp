#pragma once
// A minimal XML well-formedness check for the SVG renderers' tests.
#include <cstddef>
#include <map>
#include <regex>
#include <string>
#include <vector>

namespace plumb::test {

// A minimal XML well-formedness check for the subset the renderer writes:
// the declaration, elements with quoted attributes, self-closing tags, text
// with the five predefined entities (and numeric references). Returns an
// empty string when well-formed, else what went wrong. Also collects every
// element's name and attributes, in document order.
struct Element {
  std::string name;
  std::map<std::string, std::string> attributes;
  std::size_t depth = 0;
};

inline std::string check_xml(const std::string& doc, std::vector<Element>* elements) {
  std::vector<std::string> open;
  std::size_t roots = 0;
  std::size_t i = 0;
  if (doc.starts_with("<?xml")) {
    i = doc.find("?>");
    if (i == std::string::npos) return "unterminated declaration";
    i += 2;
  }
  const auto check_text = [](const std::string& text) -> std::string {
    for (std::size_t k = 0; k < text.size(); ++k) {
      if (text[k] == '<') return "raw < in text";
      if (text[k] == '&') {
        const std::size_t semi = text.find(';', k);
        if (semi == std::string::npos) return "unterminated entity";
        const std::string entity = text.substr(k + 1, semi - k - 1);
        static const std::regex ok("amp|lt|gt|quot|apos|#[0-9]+|#x[0-9a-fA-F]+");
        if (!std::regex_match(entity, ok)) return "unknown entity &" + entity + ";";
      }
      const auto u = static_cast<unsigned char>(text[k]);
      if (u < 0x20 && text[k] != '\n' && text[k] != '\t' && text[k] != '\r') return "control character";
    }
    return "";
  };
  static const std::regex attribute(R"re(\s+([A-Za-z_:][-A-Za-z0-9_:.]*)="([^"<]*)")re");
  static const std::regex name_re(R"([A-Za-z_:][-A-Za-z0-9_:.]*)");
  while (i < doc.size()) {
    const std::size_t lt = doc.find('<', i);
    const std::string text = doc.substr(i, lt == std::string::npos ? std::string::npos : lt - i);
    if (open.empty() && text.find_first_not_of(" \n\t\r") != std::string::npos) return "text outside the root";
    if (const std::string e = check_text(text); !e.empty()) return e;
    if (lt == std::string::npos) break;
    const std::size_t gt = doc.find('>', lt);
    if (gt == std::string::npos) return "unterminated tag";
    std::string tag = doc.substr(lt + 1, gt - lt - 1);
    i = gt + 1;
    if (tag.starts_with("!--")) {
      const std::size_t end = doc.find("-->", lt);
      if (end == std::string::npos) return "unterminated comment";
      i = end + 3;
      continue;
    }
    if (tag.starts_with("/")) {
      const std::string name = tag.substr(1);
      if (open.empty() || open.back() != name) return "mismatched </" + name + ">";
      open.pop_back();
      continue;
    }
    const bool self_closing = tag.ends_with("/");
    if (self_closing) tag.pop_back();
    std::smatch m;
    const std::size_t name_end = tag.find_first_of(" \n\t");
    const std::string name = tag.substr(0, name_end);
    if (!std::regex_match(name, name_re)) return "bad element name '" + name + "'";
    Element element{name, {}, open.size()};
    std::string rest = name_end == std::string::npos ? "" : tag.substr(name_end);
    while (std::regex_search(rest, m, attribute) && m.position(0) == 0) {
      if (element.attributes.count(m[1])) return "duplicate attribute " + m[1].str();
      if (const std::string e = check_text(m[2]); !e.empty()) return e + " in attribute";
      element.attributes[m[1]] = m[2];
      rest = m.suffix();
    }
    if (rest.find_first_not_of(" \n\t") != std::string::npos) return "bad attribute text '" + rest + "'";
    if (open.empty()) ++roots;
    if (elements != nullptr) elements->push_back(element);
    if (!self_closing) open.push_back(name);
  }
  if (!open.empty()) return "unclosed <" + open.back() + ">";
  if (roots != 1) return "expected one root element, found " + std::to_string(roots);
  return "";
}

}  // namespace plumb::test
