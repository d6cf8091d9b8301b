#pragma once
// Pango layouts set up the one way habcast's figures use them (DejaVu Sans, sizes in points at
// 72 units per inch, hinting off so text measures the same in every format). Internal to render:
// shared by text_metrics.cpp (measuring) and figure_file.cpp (drawing).
#include <pango/pangocairo.h>

#include <memory>
#include <string>

#include "render/figure.hpp"

namespace habcast::pango_text {

struct GObjectUnref {
  void operator()(void* object) const {
    if (object) g_object_unref(object);
  }
};
using LayoutPtr = std::unique_ptr<PangoLayout, GObjectUnref>;
using ContextPtr = std::unique_ptr<PangoContext, GObjectUnref>;

/// Resolution 72 (1 pt = 1 unit), no hinting of metrics or outlines, grey antialiasing.
void configure_context(PangoContext* context);

/// Font and text of `style` on `layout` (the text set as plain text, never as markup).
void set_text(PangoLayout* layout, const std::string& text, const TextStyle& style);

/// A layout for measuring, on Pango's default Cairo font map (no surface needed).
LayoutPtr measuring_layout(const std::string& text, const TextStyle& style);

struct LayoutBox {
  double width = 0.0, height = 0.0;  ///< logical extents, points
  double baseline = 0.0;             ///< from the top of the logical box, points
};
LayoutBox layout_box(PangoLayout* layout);

/// Offset from the anchor point to the layout's top-left corner for the style's anchor and baseline.
Point2 anchor_offset(const LayoutBox& box, const TextStyle& style);

}  // namespace habcast::pango_text
