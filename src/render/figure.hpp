#pragma once
// A figure as a list of marks on a page (a display list): paths, markers, text, raster images and
// hatched masks, in page points (1/72 inch, origin top left, y down). Building a figure draws
// nothing; figure_file.hpp writes one figure as SVG, PNG or PDF through Cairo, so every picture
// comes from one piece of drawing code. Start with render/drawing.hpp (usage there).
#include <cstdint>
#include <optional>
#include <string>
#include <utility>
#include <variant>
#include <vector>

#include "core/numeric/convex_hull_2d.hpp"
#include "render/colour_ramp.hpp"

namespace habcast {

/// 1 mm in page points.
inline constexpr double kPointsPerMm = 72.0 / 25.4;
/// The width of a figure set across the text block of an A4 page (170 mm: 210 mm less 20 mm margins).
inline constexpr double kA4FigureWidth = 170.0 * kPointsPerMm;

struct Rect {
  double x = 0, y = 0, width = 0, height = 0;  ///< page points, (x, y) the top-left corner
  [[nodiscard]] double right() const { return x + width; }
  [[nodiscard]] double bottom() const { return y + height; }
};

// The style structs have constructors (not bare aggregates) so that Stroke{kInk, 0.5} leaves the
// rest at their defaults without -Wmissing-field-initializers.
struct Stroke {
  Stroke(Rgb colour_ = kInk, double width_ = 0.75, std::vector<double> dash_ = {}, double opacity_ = 1.0)
      : colour(colour_), width(width_), dash(std::move(dash_)), opacity(opacity_) {}
  Rgb colour = kInk;
  double width = 0.75;          ///< points
  std::vector<double> dash;     ///< on, off, on, ... lengths in points; empty: solid
  double opacity = 1.0;
};

struct Fill {
  Fill(Rgb colour_ = kInk, double opacity_ = 1.0) : colour(colour_), opacity(opacity_) {}
  Rgb colour = kInk;
  double opacity = 1.0;
};

/// Parallel lines drawn over an area (extrapolated pixels, regions outside the data).
struct Hatch {
  Hatch(Rgb colour_ = kInk, double spacing_ = 3.0, double width_ = 0.6, double angle_degrees_ = 45.0, double opacity_ = 1.0)
      : colour(colour_), spacing(spacing_), width(width_), angle_degrees(angle_degrees_), opacity(opacity_) {}
  Rgb colour = kInk;
  double spacing = 3.0;          ///< points between lines
  double width = 0.6;            ///< line width, points
  double angle_degrees = 45.0;   ///< rising to the right
  double opacity = 1.0;
};

enum class MarkerShape { circle, square, triangle, diamond };

struct Marker {
  Marker(MarkerShape shape_ = MarkerShape::circle, double size_ = 3.0, std::optional<Fill> fill_ = Fill{},
         std::optional<Stroke> stroke_ = std::nullopt)
      : shape(shape_), size(size_), fill(std::move(fill_)), stroke(std::move(stroke_)) {}
  MarkerShape shape = MarkerShape::circle;
  double size = 3.0;  ///< diameter (or side), points
  std::optional<Fill> fill = Fill{};
  std::optional<Stroke> stroke;
};

enum class Anchor { start, middle, end };           ///< horizontal: where the position is along the text
enum class Baseline { alphabetic, top, middle, bottom };  ///< vertical: which line of the text sits at y

struct TextStyle {
  TextStyle(double size_ = 8.0, bool bold_ = false, bool italic_ = false, Rgb colour_ = kInk)
      : size(size_), bold(bold_), italic(italic_), colour(colour_) {}
  double size = 8.0;  ///< points
  bool bold = false;
  bool italic = false;
  Rgb colour = kInk;
  Anchor anchor = Anchor::start;
  Baseline baseline = Baseline::alphabetic;
  double angle_degrees = 0.0;  ///< counter-clockwise about the anchor (90: reads bottom to top)
  double halo = 0.0;           ///< width of a white outline behind the text (labels over data), points
};

/// A raster of palette indices, row 0 at the top, drawn into a page rectangle pixel by pixel
/// (nearest neighbour, no smoothing: a map's cells stay cells).
struct IndexedImage {
  int width = 0, height = 0;
  std::vector<std::uint8_t> index;  ///< width * height, row-major
  std::vector<Rgb> palette;         ///< colour of each index (at most 256)
  std::vector<bool> transparent;    ///< optional, per palette entry: leave such pixels undrawn
};

/// Where a hatch is drawn over an image: 1 per pixel to hatch, 0 elsewhere; row 0 at the top.
struct PixelMask {
  int width = 0, height = 0;
  std::vector<std::uint8_t> on;
};

struct PathMark {
  std::vector<Point2> points;
  bool closed = false;
  std::optional<Fill> fill;
  std::optional<Stroke> stroke;
  std::optional<Hatch> hatch;  ///< over the inside of a closed path
};
struct MarkersMark {
  std::vector<Point2> centres;
  Marker marker;
};
struct TextMark {
  Point2 at;
  std::string text;  ///< UTF-8, drawn as given (no markup): units may use °, ², ±
  TextStyle style;
};
struct ImageMark {
  Rect where;
  IndexedImage image;
};
struct HatchMaskMark {
  Rect where;
  PixelMask mask;
  Hatch hatch;
};

/// One mark: what it draws, the rectangle it is clipped to, and its role ("contour",
/// "training-point", ...), which tests and tools use to find it; the files do not carry it.
struct Mark {
  std::variant<PathMark, MarkersMark, TextMark, ImageMark, HatchMaskMark> shape;
  std::optional<Rect> clip;
  std::string role;
};

/// A page of `width` x `height` points on a white ground, and the marks drawn on it in order.
class Figure {
 public:
  Figure(double width, double height);

  [[nodiscard]] double width() const { return width_; }
  [[nodiscard]] double height() const { return height_; }
  [[nodiscard]] const std::vector<Mark>& marks() const { return marks_; }
  /// The marks of one role, in drawing order.
  [[nodiscard]] std::vector<const Mark*> marks_with_role(const std::string& role) const;

  /// Title and subject stored in the file where the format has a place for them (PDF, PNG).
  std::string title, subject;

  void add(Mark mark) { marks_.push_back(std::move(mark)); }
  void path(std::vector<Point2> points, bool closed, std::optional<Fill> fill, std::optional<Stroke> stroke,
            const std::string& role = {}, std::optional<Rect> clip = {});
  void line(Point2 from, Point2 to, const Stroke& stroke, const std::string& role = {});
  void rect(const Rect& r, std::optional<Fill> fill, std::optional<Stroke> stroke, const std::string& role = {});
  void text(Point2 at, std::string text, const TextStyle& style, const std::string& role = {});
  /// Lines of text, the first at `at`, each `leading` x size below the last (the same anchor).
  /// Returns the y of the last baseline.
  double text_lines(Point2 at, const std::vector<std::string>& lines, const TextStyle& style, double leading = 1.3,
                    const std::string& role = {});
  void markers(std::vector<Point2> centres, const Marker& marker, const std::string& role = {}, std::optional<Rect> clip = {});
  void image(const Rect& where, IndexedImage image, const std::string& role = {});
  void hatch_mask(const Rect& where, PixelMask mask, const Hatch& hatch, const std::string& role = {});

 private:
  double width_, height_;
  std::vector<Mark> marks_;
};

}  // namespace habcast
