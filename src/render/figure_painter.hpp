#pragma once
// Draws a Figure's marks on a Cairo context: the one painter behind every format (figure_file.cpp
// picks the surface). Internal to render.
#include <cairo.h>

#include <memory>

#include "render/figure.hpp"

namespace habcast::figure_painter {

struct SurfaceFree {
  void operator()(cairo_surface_t* s) const { cairo_surface_destroy(s); }
};
struct ContextFree {
  void operator()(cairo_t* c) const { cairo_destroy(c); }
};
using SurfacePtr = std::unique_ptr<cairo_surface_t, SurfaceFree>;
using CairoPtr = std::unique_ptr<cairo_t, ContextFree>;

/// An image surface, or IoError naming its size when Cairo cannot make it.
SurfacePtr checked_image(cairo_format_t format, int w, int h);

/// The white page, then every mark in order, each clipped to its rectangle.
void paint_figure(cairo_t* cr, const Figure& figure);

}  // namespace habcast::figure_painter
