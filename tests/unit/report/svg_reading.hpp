// Reading back what an SVG of src/report/svg.cpp draws, for the report's tests.
#pragma once

#include <map>
#include <string>
#include <utility>
#include <vector>

#include "report/svg.hpp"

namespace loopaudit::svg_reading {

// An element svg::Canvas writes, with its attributes.
struct Element {
  std::map<std::string, std::string> attributes;
  std::string content;  // of a text, unescaped
  double number(const std::string& name) const { return std::stod(attributes.at(name)); }
  std::string get(const std::string& name) const {
    const auto at = attributes.find(name);
    return at == attributes.end() ? "" : at->second;
  }
};

inline std::string unescape(std::string text) {
  for (const auto& [from, to] : std::vector<std::pair<std::string, std::string>>{
           {"&lt;", "<"}, {"&gt;", ">"}, {"&quot;", "\""}, {"&#39;", "'"}, {"&amp;", "&"}}) {
    for (auto at = text.find(from); at != std::string::npos; at = text.find(from, at + to.size())) {
      text.replace(at, from.size(), to);
    }
  }
  return text;
}

inline std::vector<Element> elements(const std::string& svg, const std::string& tag) {
  std::vector<Element> out;
  const std::string open = "<" + tag + " ";
  for (auto at = svg.find(open); at != std::string::npos; at = svg.find(open, at + 1)) {
    const auto end = svg.find('>', at);
    Element e;
    const std::string head = svg.substr(at + open.size(), end - at - open.size());
    for (std::size_t k = 0; (k = head.find("=\"", k)) != std::string::npos;) {
      const auto name_start = head.rfind(' ', k) == std::string::npos ? 0 : head.rfind(' ', k) + 1;
      const auto value_end = head.find('"', k + 2);
      e.attributes[head.substr(name_start, k - name_start)] = head.substr(k + 2, value_end - k - 2);
      k = value_end + 1;
    }
    if (tag == "text") e.content = unescape(svg.substr(end + 1, svg.find("</text>", end) - end - 1));
    out.push_back(e);
  }
  return out;
}

// The labelled texts of `content` (all of them, in drawing order).
inline std::vector<Element> texts_of(const std::string& svg, const std::string& content) {
  std::vector<Element> out;
  for (const auto& t : elements(svg, "text")) {
    if (t.content == content) out.push_back(t);
  }
  return out;
}

// The points of a path's d ("M" and "L" with x,y; "h0" draws a dot where it stands), one list a subpath.
inline std::vector<std::vector<svg::Point>> subpaths(const std::string& d) {
  std::vector<std::vector<svg::Point>> out;
  std::size_t k = 0;
  while (k < d.size()) {
    const char command = d[k++];
    if (command == 'h') {
      while (k < d.size() && d[k] != 'M' && d[k] != 'L') ++k;
      continue;
    }
    std::size_t used = 0;
    const double x = std::stod(d.substr(k), &used);
    k += used + 1;  // the comma
    const double y = std::stod(d.substr(k), &used);
    k += used;
    if (command == 'M') out.emplace_back();
    out.back().push_back({x, y});
  }
  return out;
}

}  // namespace loopaudit::svg_reading
