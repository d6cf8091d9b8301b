#include "render/niche_plot.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <stdexcept>

#include "core/base/number_text.hpp"
#include "core/model/link.hpp"
#include "core/model/model_values.hpp"
#include "render/unit_text.hpp"

namespace habcast {

namespace {

std::string axis_label(const Covariate& c) {
  std::string units = typeset_units(c.units);
  if (c.transform != Transform::none) units += std::string(units.empty() ? "" : ", ") + to_string(c.transform) + " scale";
  return units.empty() ? c.name : c.name + " (" + units + ")";
}

struct Span {
  double lo = std::numeric_limits<double>::infinity();
  double hi = -std::numeric_limits<double>::infinity();
  void add(double v) {
    if (!std::isfinite(v)) return;
    lo = std::min(lo, v);
    hi = std::max(hi, v);
  }
  [[nodiscard]] bool empty() const { return !(hi >= lo); }
};

/// The window: the training points, and the stationary point when it is not far outside them;
/// a stationary point many standard deviations away would squash the data into a corner.
void choose_window(NichePlot& plot, const PairDescription& pair) {
  Span x, y;
  for (const Point2& p : pair.training) {
    x.add(p.x);
    y.add(p.y);
  }
  const bool has_point = pair.analysis.shape != SurfaceShape::ridge;
  const Point2 s{pair.analysis.stationary[0], pair.analysis.stationary[1]};
  if (x.empty() || y.empty()) {
    // No training data: centre on the stationary point (or the reference) with +-3 model units.
    const Point2 c = has_point ? s : Point2{0.0, 0.0};
    x.add(c.x - 3.0);
    x.add(c.x + 3.0);
    y.add(c.y - 3.0);
    y.add(c.y + 3.0);
  } else if (has_point) {
    const double reach = 3.0;  // model units beyond the data that we still stretch the window for
    if (s.x >= x.lo - reach && s.x <= x.hi + reach && s.y >= y.lo - reach && s.y <= y.hi + reach) {
      x.add(s.x);
      y.add(s.y);
    } else {
      plot.notes.push_back("the stationary point lies outside this window");
    }
  }
  const double px = 0.06 * std::max(x.hi - x.lo, 1e-6), py = 0.06 * std::max(y.hi - y.lo, 1e-6);
  plot.x0 = x.lo - px;
  plot.x1 = x.hi + px;
  plot.y0 = y.lo - py;
  plot.y1 = y.hi + py;
}

/// Round raw values for tick marks. On a log axis, 1-2-5 steps per decade (or whole decades when
/// the axis spans many) so that ticks do not crowd into the top decade.
std::vector<double> raw_ticks(const Covariate& c, double raw_lo, double raw_hi) {
  const bool logarithmic = (c.transform == Transform::log || c.transform == Transform::log1p) && raw_lo > 0.0;
  if (logarithmic && raw_hi / raw_lo > 3.0) {
    for (const std::vector<double>& mantissas : {std::vector<double>{1, 2, 5}, std::vector<double>{1}}) {
      std::vector<double> out;
      for (double decade = std::pow(10.0, std::floor(std::log10(raw_lo))); decade <= raw_hi; decade *= 10.0)
        for (double m : mantissas)
          if (m * decade >= raw_lo && m * decade <= raw_hi) out.push_back(m * decade);
      if (out.size() <= 8) return out;
    }
  }
  return nice_levels(raw_lo, raw_hi, 6);
}

std::vector<PlotTick> ticks(const Covariate& c, double lo, double hi) {
  std::vector<PlotTick> out;
  for (double raw : raw_ticks(c, raw_value(c, lo), raw_value(c, hi))) {
    const double m = model_value(c, raw);
    if (std::isfinite(m)) out.push_back({m, typeset_number(raw, 4)});
  }
  return out;
}

void sample_response(NichePlot& plot, const PairDescription& pair, Link link) {
  const int n = plot.grid;
  plot.response.resize(n, n);
  Eigen::VectorXd x(2);
  for (int r = 0; r < n; ++r)
    for (int c = 0; c < n; ++c) {
      x[0] = plot.x0 + (plot.x1 - plot.x0) * c / (n - 1);
      x[1] = plot.y1 - (plot.y1 - plot.y0) * r / (n - 1);
      plot.response(r, c) = link_inverse(link, pair.form.eta(x));
    }
}

void contour_levels(NichePlot& plot, const PairDescription& pair, double fraction) {
  const double lo = plot.response.minCoeff(), hi = plot.response.maxCoeff();
  std::vector<double> values = nice_levels(lo, hi, 10);
  const bool peak = pair.analysis.shape == SurfaceShape::peak;
  const double breadth = fraction * pair.analysis.response;
  for (double v : values) {
    ContourLevel level;
    level.value = v;
    // Lines use the darker three quarters of the ramp so that even the highest stays visible on white.
    level.ramp = hi > lo ? 0.75 * (v - lo) / (hi - lo) : 0.0;
    level.lines = contour_lines(plot.response, v);
    plot.levels.push_back(std::move(level));
  }
  if (peak && breadth > lo && breadth < hi) {
    ContourLevel level;
    level.value = breadth;
    level.ramp = 0.75 * (breadth - lo) / (hi - lo);
    level.breadth = true;
    level.lines = contour_lines(plot.response, breadth);
    plot.levels.push_back(std::move(level));
  }
}

PlotLine through(Point2 centre, const Eigen::VectorXd& direction, double half, std::string label) {
  return {{centre.x - half * direction[0], centre.y - half * direction[1]},
          {centre.x + half * direction[0], centre.y + half * direction[1]},
          std::move(label)};
}

void stationary_and_axes(NichePlot& plot, const PairDescription& pair, double fraction) {
  const CanonicalAnalysis& a = pair.analysis;
  if (a.shape == SurfaceShape::ridge) return;
  const Point2 s{a.stationary[0], a.stationary[1]};
  if (s.x < plot.x0 || s.x > plot.x1 || s.y < plot.y0 || s.y > plot.y1) return;
  plot.stationary = s;
  plot.stationary_label = a.shape == SurfaceShape::peak ? "optimum" : (a.shape == SurfaceShape::basin ? "minimum" : "saddle point");
  const double diagonal = std::hypot(plot.x1 - plot.x0, plot.y1 - plot.y0);
  for (std::size_t k = 0; k < a.axes.size(); ++k) {
    const PrincipalAxis& axis = a.axes[k];
    // A peak's axes run out to the breadth contour; other shapes have no breadth, so the axes
    // simply cross the window.
    const double half = axis.half_width ? *axis.half_width : 0.4 * diagonal;
    std::string label = "axis " + std::to_string(k + 1);
    if (axis.half_width) label += " (to " + significant(100.0 * fraction, 4) + " % of the peak)";
    plot.principal_axes.push_back(through(s, axis.direction, half, label));
  }
}

void conditional_lines(NichePlot& plot, const PairDescription& pair, const std::string& first, const std::string& second) {
  const ConditionalOptimum& a = pair.first_given_second;
  if (a.defined) {
    const std::string what = a.maximum ? "best " : "lowest ";
    plot.conditional_optima.push_back({{a.intercept + a.slope * plot.y0, plot.y0},
                                       {a.intercept + a.slope * plot.y1, plot.y1},
                                       what + first + " for each " + second});
  }
  const ConditionalOptimum& b = pair.second_given_first;
  if (b.defined) {
    const std::string what = b.maximum ? "best " : "lowest ";
    plot.conditional_optima.push_back({{plot.x0, b.intercept + b.slope * plot.x0},
                                       {plot.x1, b.intercept + b.slope * plot.x1},
                                       what + second + " for each " + first});
  }
}

std::string held_summary(const ModelSpec& spec, const NicheDescription& d, int first, int second) {
  std::string s;
  for (std::size_t c = 0; c < spec.covariates.size(); ++c) {
    if (static_cast<int>(c) == first || static_cast<int>(c) == second) continue;
    const Covariate& cov = spec.covariates[c];
    const double v = d.reference.values[static_cast<Eigen::Index>(c)];
    std::string value = cov.categorical ? cov.levels[static_cast<std::size_t>(v)].name : typeset_number(raw_value(cov, v), 4);
    const std::string units = typeset_units(cov.units);
    if (!cov.categorical && !units.empty()) value += (units == "°" ? "" : " ") + units;  // an angle takes no space: 4.3°
    s += (s.empty() ? "" : ", ") + cov.name + " = " + value;
  }
  return s.empty() ? "" : "Others held at " + s;
}

}  // namespace

NichePlot layout_niche_plot(const ModelSpec& spec, const NicheDescription& description, double fraction, int grid) {
  if (!description.pair) throw std::invalid_argument("the plot needs a pair of covariates");
  if (grid < 3) throw std::invalid_argument("the response grid needs at least 3 samples per side");
  const PairDescription& pair = *description.pair;
  const Covariate& cx = spec.covariates[static_cast<std::size_t>(pair.first)];
  const Covariate& cy = spec.covariates[static_cast<std::size_t>(pair.second)];
  NichePlot plot;
  plot.grid = grid;
  plot.breadth_percent = 100.0 * fraction;
  plot.title = (spec.name.empty() ? std::string("Fitted niche") : spec.name) + ": " + cx.name + " and " + cy.name;
  plot.subtitle = held_summary(spec, description, pair.first, pair.second);
  plot.x_label = axis_label(cx);
  plot.y_label = axis_label(cy);
  plot.response_label = response_description(spec);
  plot.caption = spec.description;
  choose_window(plot, pair);
  plot.x_ticks = ticks(cx, plot.x0, plot.x1);
  plot.y_ticks = ticks(cy, plot.y0, plot.y1);
  plot.training = pair.training;
  plot.hull = pair.hull;
  sample_response(plot, pair, spec.link);
  contour_levels(plot, pair, fraction);
  stationary_and_axes(plot, pair, fraction);
  conditional_lines(plot, pair, cx.name, cy.name);
  return plot;
}

}  // namespace habcast
