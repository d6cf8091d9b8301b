#include "render/svg_document.hpp"

#include <cmath>
#include <cstdio>

namespace habcast {

std::string xml_escape(const std::string& text) {
  std::string out;
  out.reserve(text.size());
  for (char ch : text) {
    switch (ch) {
      case '&': out += "&amp;"; break;
      case '<': out += "&lt;"; break;
      case '>': out += "&gt;"; break;
      case '"': out += "&quot;"; break;
      case '\'': out += "&apos;"; break;
      default:
        // Control characters other than tab and newline are not allowed in XML 1.0.
        if (static_cast<unsigned char>(ch) < 0x20 && ch != '\t' && ch != '\n') out += ' ';
        else out += ch;
    }
  }
  return out;
}

std::string svg_number(double v) {
  if (!std::isfinite(v)) v = 0.0;
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.2f", v);
  std::string s = buf;
  while (!s.empty() && s.back() == '0') s.pop_back();
  if (!s.empty() && s.back() == '.') s.pop_back();
  return s == "-0" ? "0" : s;
}

std::string svg_points(const std::vector<Point2>& points) {
  std::string s;
  for (const Point2& p : points) {
    if (!s.empty()) s += ' ';
    s += svg_number(p.x) + "," + svg_number(p.y);
  }
  return s;
}

namespace {

std::string open_tag(const std::string& name, const Attributes& attributes) {
  std::string s = "<" + name;
  for (const auto& [key, value] : attributes) s += " " + key + "=\"" + xml_escape(value) + "\"";
  return s;
}

}  // namespace

SvgDocument::SvgDocument(double width, double height) : width_(width), height_(height) {}

void SvgDocument::element(const std::string& name, const Attributes& attributes) {
  body_ += std::string(open_.size() * 2 + 2, ' ') + open_tag(name, attributes) + "/>\n";
}

void SvgDocument::text(const std::string& name, const Attributes& attributes, const std::string& content) {
  body_ += std::string(open_.size() * 2 + 2, ' ') + open_tag(name, attributes) + ">" + xml_escape(content) + "</" +
           name + ">\n";
}

void SvgDocument::begin(const std::string& name, const Attributes& attributes) {
  body_ += std::string(open_.size() * 2 + 2, ' ') + open_tag(name, attributes) + ">\n";
  open_.push_back(name);
}

void SvgDocument::end() {
  if (open_.empty()) return;
  const std::string name = open_.back();
  open_.pop_back();
  body_ += std::string(open_.size() * 2 + 2, ' ') + "</" + name + ">\n";
}

std::string SvgDocument::str() {
  while (!open_.empty()) end();
  const std::string w = svg_number(width_), h = svg_number(height_);
  return "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"" +
         w + "\" height=\"" + h + "\" viewBox=\"0 0 " + w + " " + h + "\">\n" + body_ + "</svg>\n";
}

}  // namespace habcast
