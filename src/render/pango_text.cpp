#include "render/pango_text.hpp"

#include "render/figure_style.hpp"

namespace habcast::pango_text {

namespace {

struct FontOptionsFree {
  void operator()(cairo_font_options_t* o) const { cairo_font_options_destroy(o); }
};
struct FontDescriptionFree {
  void operator()(PangoFontDescription* d) const { pango_font_description_free(d); }
};

}  // namespace

void configure_context(PangoContext* context) {
  pango_cairo_context_set_resolution(context, 72.0);
  std::unique_ptr<cairo_font_options_t, FontOptionsFree> options(cairo_font_options_create());
  cairo_font_options_set_hint_metrics(options.get(), CAIRO_HINT_METRICS_OFF);
  cairo_font_options_set_hint_style(options.get(), CAIRO_HINT_STYLE_NONE);
  cairo_font_options_set_antialias(options.get(), CAIRO_ANTIALIAS_GRAY);
  pango_cairo_context_set_font_options(context, options.get());
  pango_context_set_round_glyph_positions(context, FALSE);
}

void set_text(PangoLayout* layout, const std::string& text, const TextStyle& style) {
  std::unique_ptr<PangoFontDescription, FontDescriptionFree> font(pango_font_description_new());
  pango_font_description_set_family(font.get(), figure_style::kFontFamily);
  pango_font_description_set_absolute_size(font.get(), style.size * PANGO_SCALE);
  pango_font_description_set_weight(font.get(), style.bold ? PANGO_WEIGHT_BOLD : PANGO_WEIGHT_NORMAL);
  pango_font_description_set_style(font.get(), style.italic ? PANGO_STYLE_ITALIC : PANGO_STYLE_NORMAL);
  pango_layout_set_font_description(layout, font.get());
  // Raster metadata (a band's unit) need not be UTF-8; Pango would warn and cut the text at the
  // first bad byte, so bad bytes become U+FFFD instead.
  std::unique_ptr<gchar, decltype(&g_free)> valid(g_utf8_make_valid(text.c_str(), static_cast<gssize>(text.size())), g_free);
  pango_layout_set_text(layout, valid.get(), -1);
}

LayoutPtr measuring_layout(const std::string& text, const TextStyle& style) {
  ContextPtr context(pango_font_map_create_context(pango_cairo_font_map_get_default()));
  configure_context(context.get());
  LayoutPtr layout(pango_layout_new(context.get()));
  set_text(layout.get(), text, style);
  return layout;
}

LayoutBox layout_box(PangoLayout* layout) {
  PangoRectangle logical;
  pango_layout_get_extents(layout, nullptr, &logical);
  return {static_cast<double>(logical.width) / PANGO_SCALE, static_cast<double>(logical.height) / PANGO_SCALE,
          static_cast<double>(pango_layout_get_baseline(layout)) / PANGO_SCALE};
}

Point2 anchor_offset(const LayoutBox& box, const TextStyle& style) {
  double dx = 0.0, dy = 0.0;
  if (style.anchor == Anchor::middle) dx = -box.width / 2.0;
  else if (style.anchor == Anchor::end) dx = -box.width;
  switch (style.baseline) {
    case Baseline::alphabetic: dy = -box.baseline; break;
    case Baseline::top: dy = 0.0; break;
    case Baseline::bottom: dy = -box.height; break;
    // Half the height of a capital above the baseline (DejaVu Sans: caps are 0.73 em).
    case Baseline::middle: dy = -box.baseline + 0.365 * style.size; break;
  }
  return {dx, dy};
}

}  // namespace habcast::pango_text
