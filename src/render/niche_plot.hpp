#pragma once
// describe's picture of a pair of covariates: contour lines of the predicted response over the
// plane of the two covariates (every other covariate at its reference), the training points and
// their convex hull, the stationary point, the principal axes and the lines of conditional optima.
// The content is computed once (NichePlot) and drawn as one Figure (render/drawing.hpp), written
// as SVG, PNG or PDF.
#include <Eigen/Core>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "core/model/model_spec.hpp"
#include "core/niche/niche_description.hpp"
#include "core/numeric/convex_hull_2d.hpp"
#include "render/contours.hpp"
#include "render/figure.hpp"

namespace habcast {

struct PlotTick {
  double position = 0.0;  ///< model units
  std::string label;      ///< raw units
};

struct PlotLine {
  Point2 from, to;  ///< model units
  std::string label;
};

struct ContourLevel {
  double value = 0.0;  ///< response scale
  double ramp = 0.0;   ///< position on the colour ramp, 0..1
  bool breadth = false;  ///< the level at `fraction` of the peak (drawn dashed)
  std::vector<Polyline> lines;  ///< grid coordinates (column, row); row 0 is the top edge
};

struct NichePlot {
  std::string title;
  std::string subtitle;     ///< what the others are held at
  std::string x_label, y_label, response_label;
  double x0 = 0, x1 = 1, y0 = 0, y1 = 1;  ///< plotted window, model units
  int grid = 0;                          ///< samples per side of the response grid
  Eigen::MatrixXd response;              ///< grid x grid, row 0 at y1 (top)
  std::vector<ContourLevel> levels;
  std::vector<PlotTick> x_ticks, y_ticks;
  std::vector<Point2> training, hull;    ///< model units
  std::optional<Point2> stationary;      ///< inside the window, model units
  std::string stationary_label;
  std::vector<PlotLine> principal_axes;
  std::vector<PlotLine> conditional_optima;
  std::vector<std::string> notes;        ///< e.g. "optimum outside the plotted window"
  std::string caption;                   ///< the model's description (the demo's says it is invented)
  double breadth_percent = 50.0;         ///< the breadth level as a percentage of the peak
};

/// Lays out the plot of `description.pair` (which must be set). `fraction` is the breadth level
/// (as in the analysis); `grid` the number of response samples per side (>= 3).
NichePlot layout_niche_plot(const ModelSpec& spec, const NicheDescription& description, double fraction, int grid = 121);

/// The plot as a figure at A4 text width (170 mm), the plot square with its legend beside it.
Figure niche_plot_figure(const NichePlot& plot);

}  // namespace habcast
