#pragma once
// habcast's one drawing interface: every picture is built as a Figure (a page of marks) and
// written as SVG, PNG or PDF by the same code, through Cairo and Pango (DejaVu Sans).
//
//   Figure fig(kA4FigureWidth, 300.0);                         // page in points (170 mm wide)
//   fig.text({40, 16}, "Response to tmin", figure_style::title());
//   Axes ax(fig, Rect{40, 30, 260, 220}, -5, 15, 0, 1);        // page rectangle, data x and y ranges
//   ax.grid(round_ticks(-5, 15), round_ticks(0, 1));
//   ax.band(x, lower, upper, Fill{ramp_colour(0.8), 0.5}, "confidence-band");
//   ax.line(curve, Stroke{kInk, 1.0}, "response");
//   ax.points(sites, Marker{MarkerShape::circle, 2.5}, "training-point");
//   ax.image(indexed_image, "map");  ax.hatch_mask(mask, Hatch{}, "extrapolated");
//   ax.x_axis(round_ticks(-5, 15), "tmin (°C)");  ax.y_axis(round_ticks(0, 1), "probability");
//   ax.frame();
//   Legend legend(120);  legend.heading("Probability");  legend.line("fitted", Stroke{kInk, 1.0});
//   legend.swatch("95 % band", Fill{ramp_colour(0.8), 0.5});   legend.draw(fig, {320, 30});
//   write_file_atomically(path, encode_figure(fig, path));    // format by extension
//
// Sizes are points (1/72 inch); colours come from colour_ramp.hpp; type sizes and line widths
// from figure_style.hpp. Each mark may carry a role, so tests can count what a figure draws
// without comparing images. A new kind of figure is a function that returns a Figure.
#include "render/axes.hpp"
#include "render/colour_ramp.hpp"
#include "render/figure.hpp"
#include "render/figure_file.hpp"
#include "render/figure_style.hpp"
#include "render/legend.hpp"
#include "render/scale_bar.hpp"
#include "render/text_metrics.hpp"
#include "render/unit_text.hpp"
