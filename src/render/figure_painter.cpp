#include "render/figure_painter.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <numbers>
#include <string>

#include "core/base/error.hpp"
#include "render/pango_text.hpp"

namespace habcast::figure_painter {

SurfacePtr checked_image(cairo_format_t format, int w, int h) {
  SurfacePtr s(cairo_image_surface_create(format, w, h));
  if (cairo_surface_status(s.get()) != CAIRO_STATUS_SUCCESS)
    throw IoError(std::string("cannot make an image of ") + std::to_string(w) + " x " + std::to_string(h) +
                  " pixels: " + cairo_status_to_string(cairo_surface_status(s.get())));
  return s;
}

namespace {

struct PatternFree {
  void operator()(cairo_pattern_t* p) const { cairo_pattern_destroy(p); }
};
using PatternPtr = std::unique_ptr<cairo_pattern_t, PatternFree>;

void source(cairo_t* cr, Rgb c, double opacity) { cairo_set_source_rgba(cr, c.r / 255.0, c.g / 255.0, c.b / 255.0, opacity); }

void apply_stroke(cairo_t* cr, const Stroke& s) {
  source(cr, s.colour, s.opacity);
  cairo_set_line_width(cr, s.width);
  cairo_set_dash(cr, s.dash.empty() ? nullptr : s.dash.data(), static_cast<int>(s.dash.size()), 0.0);
  cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
  cairo_set_line_cap(cr, s.dash.empty() ? CAIRO_LINE_CAP_ROUND : CAIRO_LINE_CAP_BUTT);
}

/// Hatch lines across a box, placed on multiples of the spacing measured from the page origin, so
/// that neighbouring hatched areas line up.
void hatch_lines(cairo_t* cr, double x0, double y0, double x1, double y1, const Hatch& h) {
  const double a = h.angle_degrees * std::numbers::pi / 180.0;
  const Point2 along{std::cos(a), -std::sin(a)}, across{std::sin(a), std::cos(a)};
  double lo = INFINITY, hi = -INFINITY;
  for (Point2 corner : {Point2{x0, y0}, Point2{x1, y0}, Point2{x0, y1}, Point2{x1, y1}}) {
    const double s = corner.x * across.x + corner.y * across.y;
    lo = std::min(lo, s);
    hi = std::max(hi, s);
  }
  const double spacing = std::max(h.spacing, 0.1);
  for (double s = std::floor(lo / spacing) * spacing; s <= hi + spacing; s += spacing) {
    const Point2 base{s * across.x, s * across.y};
    // Cut the infinite line to the box: project the box centre onto it and go half the diagonal either way.
    const double t = ((x0 + x1) / 2.0 - base.x) * along.x + ((y0 + y1) / 2.0 - base.y) * along.y;
    const double half = std::hypot(x1 - x0, y1 - y0);
    cairo_move_to(cr, base.x + (t - half) * along.x, base.y + (t - half) * along.y);
    cairo_line_to(cr, base.x + (t + half) * along.x, base.y + (t + half) * along.y);
  }
  source(cr, h.colour, h.opacity);
  cairo_set_line_width(cr, h.width);
  cairo_set_dash(cr, nullptr, 0, 0.0);
  cairo_set_line_cap(cr, CAIRO_LINE_CAP_BUTT);
  cairo_stroke(cr);
}

void trace(cairo_t* cr, const std::vector<Point2>& points, bool closed) {
  cairo_new_path(cr);
  for (std::size_t i = 0; i < points.size(); ++i) {
    if (i == 0) cairo_move_to(cr, points[i].x, points[i].y);
    else cairo_line_to(cr, points[i].x, points[i].y);
  }
  if (closed && points.size() > 2) cairo_close_path(cr);
}

void paint(cairo_t* cr, const PathMark& m) {
  if (m.points.size() < 2) return;
  if (m.fill) {
    trace(cr, m.points, m.closed);
    source(cr, m.fill->colour, m.fill->opacity);
    cairo_fill(cr);
  }
  if (m.hatch && m.closed) {
    cairo_save(cr);
    trace(cr, m.points, true);
    double x0, y0, x1, y1;
    cairo_path_extents(cr, &x0, &y0, &x1, &y1);
    cairo_clip(cr);
    hatch_lines(cr, x0, y0, x1, y1, *m.hatch);
    cairo_restore(cr);
  }
  if (m.stroke) {
    trace(cr, m.points, m.closed);
    apply_stroke(cr, *m.stroke);
    cairo_stroke(cr);
  }
}

void marker_path(cairo_t* cr, Point2 c, const Marker& m) {
  const double r = m.size / 2.0;
  cairo_new_sub_path(cr);
  switch (m.shape) {
    case MarkerShape::circle: cairo_arc(cr, c.x, c.y, r, 0.0, 2.0 * std::numbers::pi); break;
    case MarkerShape::square: cairo_rectangle(cr, c.x - r, c.y - r, m.size, m.size); break;
    case MarkerShape::triangle:
      cairo_move_to(cr, c.x, c.y - 1.15 * r);
      cairo_line_to(cr, c.x + r, c.y + 0.58 * r);
      cairo_line_to(cr, c.x - r, c.y + 0.58 * r);
      cairo_close_path(cr);
      break;
    case MarkerShape::diamond:
      cairo_move_to(cr, c.x, c.y - 1.2 * r);
      cairo_line_to(cr, c.x + 1.2 * r, c.y);
      cairo_line_to(cr, c.x, c.y + 1.2 * r);
      cairo_line_to(cr, c.x - 1.2 * r, c.y);
      cairo_close_path(cr);
      break;
  }
}

void paint(cairo_t* cr, const MarkersMark& m) {
  // Each marker is filled and outlined before the next, so overlapping markers stay distinct.
  for (const Point2& c : m.centres) {
    cairo_new_path(cr);
    marker_path(cr, c, m.marker);
    if (m.marker.fill) {
      source(cr, m.marker.fill->colour, m.marker.fill->opacity);
      cairo_fill_preserve(cr);
    }
    if (m.marker.stroke) {
      apply_stroke(cr, *m.marker.stroke);
      cairo_stroke_preserve(cr);
    }
    cairo_new_path(cr);
  }
}

void paint(cairo_t* cr, const TextMark& m) {
  pango_text::LayoutPtr layout(pango_cairo_create_layout(cr));
  pango_text::configure_context(pango_layout_get_context(layout.get()));
  pango_layout_context_changed(layout.get());
  pango_text::set_text(layout.get(), m.text, m.style);
  const Point2 offset = pango_text::anchor_offset(pango_text::layout_box(layout.get()), m.style);
  cairo_save(cr);
  cairo_translate(cr, m.at.x, m.at.y);
  cairo_rotate(cr, -m.style.angle_degrees * std::numbers::pi / 180.0);
  cairo_move_to(cr, offset.x, offset.y);
  if (m.style.halo > 0.0) {
    cairo_new_path(cr);
    cairo_move_to(cr, offset.x, offset.y);
    pango_cairo_layout_path(cr, layout.get());
    cairo_set_source_rgb(cr, 1.0, 1.0, 1.0);
    cairo_set_line_width(cr, 2.0 * m.style.halo);
    cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
    cairo_stroke(cr);
    cairo_move_to(cr, offset.x, offset.y);
  }
  source(cr, m.style.colour, 1.0);
  pango_cairo_show_layout(cr, layout.get());
  cairo_restore(cr);
}

/// A pattern that maps the w x h pixels of `surface` onto `where`, pixel for pixel, unsmoothed.
PatternPtr pixel_pattern(cairo_surface_t* surface, int w, int h, const Rect& where) {
  PatternPtr pattern(cairo_pattern_create_for_surface(surface));
  cairo_pattern_set_filter(pattern.get(), CAIRO_FILTER_NEAREST);
  cairo_pattern_set_extend(pattern.get(), CAIRO_EXTEND_PAD);
  cairo_matrix_t m;
  cairo_matrix_init_scale(&m, w / where.width, h / where.height);
  cairo_matrix_translate(&m, -where.x, -where.y);
  cairo_pattern_set_matrix(pattern.get(), &m);
  return pattern;
}

void paint(cairo_t* cr, const ImageMark& m) {
  const IndexedImage& img = m.image;
  SurfacePtr surface = checked_image(CAIRO_FORMAT_ARGB32, img.width, img.height);
  std::vector<std::uint32_t> argb(img.palette.size());
  for (std::size_t i = 0; i < img.palette.size(); ++i) {
    const bool clear = i < img.transparent.size() && img.transparent[i];
    const Rgb c = img.palette[i];
    argb[i] = clear ? 0u : (0xFF000000u | (std::uint32_t{c.r} << 16) | (std::uint32_t{c.g} << 8) | std::uint32_t{c.b});
  }
  cairo_surface_flush(surface.get());
  unsigned char* data = cairo_image_surface_get_data(surface.get());
  const int stride = cairo_image_surface_get_stride(surface.get());
  for (int y = 0; y < img.height; ++y) {
    auto* row = reinterpret_cast<std::uint32_t*>(data + static_cast<std::ptrdiff_t>(y) * stride);
    const std::size_t base = static_cast<std::size_t>(y) * static_cast<std::size_t>(img.width);
    for (int x = 0; x < img.width; ++x) {
      const std::uint8_t k = img.index[base + static_cast<std::size_t>(x)];
      row[x] = k < argb.size() ? argb[k] : 0u;
    }
  }
  cairo_surface_mark_dirty(surface.get());
  const PatternPtr pattern = pixel_pattern(surface.get(), img.width, img.height, m.where);
  cairo_set_source(cr, pattern.get());
  cairo_rectangle(cr, m.where.x, m.where.y, m.where.width, m.where.height);
  cairo_fill(cr);
}

void paint(cairo_t* cr, const HatchMaskMark& m) {
  SurfacePtr surface = checked_image(CAIRO_FORMAT_A8, m.mask.width, m.mask.height);
  cairo_surface_flush(surface.get());
  unsigned char* data = cairo_image_surface_get_data(surface.get());
  const int stride = cairo_image_surface_get_stride(surface.get());
  for (int y = 0; y < m.mask.height; ++y)
    for (int x = 0; x < m.mask.width; ++x)
      data[static_cast<std::ptrdiff_t>(y) * stride + x] =
          m.mask.on[static_cast<std::size_t>(y) * static_cast<std::size_t>(m.mask.width) + static_cast<std::size_t>(x)] ? 255 : 0;
  cairo_surface_mark_dirty(surface.get());
  // The hatch is a repeating stripe (one line per period, 64 rows a period), turned to the hatch's
  // angle and placed on multiples of the spacing from the page origin like hatch_lines. A group
  // (push_group) would do as well, but Cairo 1.16's SVG surface leaks a group used as a source.
  constexpr int kRows = 64;
  SurfacePtr stripe = checked_image(CAIRO_FORMAT_ARGB32, 1, kRows);
  cairo_surface_flush(stripe.get());
  const double spacing = std::max(m.hatch.spacing, 0.1);
  const int on = std::clamp(static_cast<int>(std::lround(m.hatch.width / spacing * kRows)), 1, kRows);
  const auto alpha = static_cast<std::uint32_t>(std::lround(std::clamp(m.hatch.opacity, 0.0, 1.0) * 255.0));
  auto premultiplied = [alpha](std::uint8_t c) { return static_cast<std::uint32_t>(std::lround(c * static_cast<double>(alpha) / 255.0)); };
  const std::uint32_t ink = (alpha << 24) | (premultiplied(m.hatch.colour.r) << 16) | (premultiplied(m.hatch.colour.g) << 8) |
                            premultiplied(m.hatch.colour.b);
  unsigned char* rows = cairo_image_surface_get_data(stripe.get());
  for (int y = 0; y < kRows; ++y)
    *reinterpret_cast<std::uint32_t*>(rows + static_cast<std::ptrdiff_t>(y) * cairo_image_surface_get_stride(stripe.get())) =
        y < on ? ink : 0u;
  cairo_surface_mark_dirty(stripe.get());
  const PatternPtr hatch(cairo_pattern_create_for_surface(stripe.get()));
  cairo_pattern_set_extend(hatch.get(), CAIRO_EXTEND_REPEAT);
  cairo_pattern_set_filter(hatch.get(), CAIRO_FILTER_GOOD);
  const double a = m.hatch.angle_degrees * std::numbers::pi / 180.0, k = kRows / spacing;
  cairo_matrix_t to_stripe;  // page -> stripe: across the lines (sin a, cos a) becomes the stripe's rows
  cairo_matrix_init(&to_stripe, std::cos(a), std::sin(a) * k, -std::sin(a), std::cos(a) * k, 0.0, 0.0);
  cairo_pattern_set_matrix(hatch.get(), &to_stripe);

  cairo_save(cr);
  cairo_rectangle(cr, m.where.x, m.where.y, m.where.width, m.where.height);
  cairo_clip(cr);
  cairo_set_source(cr, hatch.get());
  const PatternPtr mask = pixel_pattern(surface.get(), m.mask.width, m.mask.height, m.where);
  cairo_mask(cr, mask.get());
  cairo_restore(cr);
}

}  // namespace

void paint_figure(cairo_t* cr, const Figure& figure) {
  cairo_set_source_rgb(cr, 1.0, 1.0, 1.0);
  cairo_paint(cr);
  for (const Mark& mark : figure.marks()) {
    cairo_save(cr);
    if (mark.clip) {
      cairo_rectangle(cr, mark.clip->x, mark.clip->y, mark.clip->width, mark.clip->height);
      cairo_clip(cr);
    }
    std::visit([cr](const auto& shape) { paint(cr, shape); }, mark.shape);
    cairo_restore(cr);
  }
}

}  // namespace habcast::figure_painter
