#pragma once
// A small SVG 1.1 writer: elements with attributes, text, nesting. Everything written is escaped,
// so labels taken from a model file (names, units) cannot break the document.
#include <string>
#include <utility>
#include <vector>

#include "core/numeric/convex_hull_2d.hpp"

namespace habcast {

using Attributes = std::vector<std::pair<std::string, std::string>>;

class SvgDocument {
 public:
  SvgDocument(double width, double height);

  /// An empty element, <name a="..."/>.
  void element(const std::string& name, const Attributes& attributes);
  /// An element with text content.
  void text(const std::string& name, const Attributes& attributes, const std::string& content);
  /// Opens a container element (g, clipPath, defs); close it with end().
  void begin(const std::string& name, const Attributes& attributes = {});
  void end();

  /// The finished document. Closes open containers.
  std::string str();

 private:
  std::string body_;
  std::vector<std::string> open_;
  double width_, height_;
};

/// "x1,y1 x2,y2 ..." for polyline/polygon points, 2 decimals.
std::string svg_points(const std::vector<Point2>& points);

/// A number with at most 2 decimals and no trailing zeros, for coordinates.
std::string svg_number(double v);

/// XML-escaped text (&, <, >, ", ').
std::string xml_escape(const std::string& text);

}  // namespace habcast
