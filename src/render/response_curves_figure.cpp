#include "render/response_curves_figure.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "core/base/number_text.hpp"
#include "core/model/model_values.hpp"
#include "render/drawing.hpp"

namespace habcast {

namespace {

constexpr double kCurvePanelWidth = 190.0;   // points; two panels across the A4 text width (482 pt)
constexpr double kCurvePanelHeight = 130.0;
constexpr double kCurvePlotLeft = 52.0, kCurveColumnGap = 42.0, kCurveRowGap = 56.0;
constexpr double kCurvePageMargin = 12.0;        // left edge of the title and the notes

const Fill kCurveBand{ramp_colour(0.72), 0.55};
const Fill kCurveTrainingShade{figure_style::kLightGrey, 0.6};
const Stroke kCurveLine{kInk, 1.0};
const Stroke kCurveExtrapolated{kInk, 1.0, {3.0, 2.0}};
const Stroke kCurveRug{figure_style::kGrey, 0.5};
const Stroke kCurveKnot{ramp_colour(0.25), 0.7, {1.0, 1.5}};

std::string response_word(const ModelSpec& spec) {
  switch (spec.family) {
    case Family::binomial: return "probability";
    case Family::poisson: return "expected count";
    case Family::gaussian: return "mean";
  }
  return "response";
}

std::string curve_axis_label(const Covariate& c) { return c.units.empty() ? c.name : c.name + " (" + c.units + ")"; }

/// y range of a panel: the band and the curve, with a little room; probabilities stay in [0, 1].
std::pair<double, double> y_range(const ModelSpec& spec, const ResponseCurve& curve) {
  double lo = std::numeric_limits<double>::infinity(), hi = -lo;
  for (const CurvePoint& p : curve.points) {
    if (!p.valid) continue;
    for (double v : {p.mu, p.lower, p.upper})
      if (std::isfinite(v)) {
        lo = std::min(lo, v);
        hi = std::max(hi, v);
      }
  }
  if (!std::isfinite(lo)) return {0.0, 1.0};
  if (spec.family != Family::gaussian) lo = 0.0;  // probabilities and counts start at zero
  if (!(hi > lo)) hi = lo + 1.0;
  hi += 0.05 * (hi - lo);
  if (spec.family == Family::binomial) hi = std::min(hi, 1.0);
  return {lo, hi};
}

void continuous_panel(Figure& fig, const Rect& area, const ModelSpec& spec, const ResponseCurve& curve) {
  const Covariate& cov = spec.covariates[static_cast<std::size_t>(curve.covariate)];
  const double x0 = curve.points.front().raw, x1 = curve.points.back().raw;
  const auto [y0, y1] = y_range(spec, curve);
  Axes ax(fig, area, x0, x1, y0, y1);
  const std::vector<Tick> xt = round_ticks(x0, x1), yt = round_ticks(y0, y1);
  ax.grid(xt, yt);
  if (curve.training_min)
    ax.polygon({{*curve.training_min, y0}, {*curve.training_max, y0}, {*curve.training_max, y1}, {*curve.training_min, y1}},
               kCurveTrainingShade, std::nullopt, "training-range");
  std::vector<double> x, lower, upper;
  for (const CurvePoint& p : curve.points)
    if (p.valid && std::isfinite(p.lower)) {
      x.push_back(p.raw);
      lower.push_back(std::max(p.lower, y0));
      upper.push_back(std::min(p.upper, y1));
    }
  if (x.size() >= 2) ax.band(x, lower, upper, kCurveBand, "confidence-band");
  // The curve in runs: solid inside the training range, dashed beyond it.
  std::vector<Point2> run;
  bool run_inside = true;
  auto flush = [&]() {
    if (run.size() >= 2) ax.line(run, run_inside ? kCurveLine : kCurveExtrapolated, run_inside ? "response" : "response-extrapolated");
    run.clear();
  };
  for (const CurvePoint& p : curve.points) {
    if (!p.valid) {
      flush();
      continue;
    }
    if (!run.empty() && p.inside_training != run_inside) {
      const Point2 last = run.back();
      flush();
      run.push_back(last);  // keep the curve connected where the style changes
    }
    run_inside = p.inside_training;
    run.push_back({p.raw, p.mu});
  }
  flush();
  for (const auto& [lo, hi] : curve.spline_boundaries)
    for (double k : {lo, hi})
      if (k >= x0 && k <= x1) ax.segment({k, y0}, {k, y1}, kCurveKnot, "spline-boundary-knot");
  const double rug_height = 0.05 * (y1 - y0);
  for (double r : curve.rug)
    if (r >= x0 && r <= x1) ax.segment({r, y0}, {r, y0 + rug_height}, kCurveRug, "rug");
  ax.x_axis(xt, curve_axis_label(cov));
  ax.y_axis(yt, response_word(spec));
  ax.frame();
}

void categorical_panel(Figure& fig, const Rect& area, const ModelSpec& spec, const ResponseCurve& curve) {
  const Covariate& cov = spec.covariates[static_cast<std::size_t>(curve.covariate)];
  const double n = static_cast<double>(curve.points.size());
  const auto [y0, y1] = y_range(spec, curve);
  Axes ax(fig, area, -0.5, n - 0.5, y0, y1);
  std::vector<Tick> xt;
  for (std::size_t i = 0; i < curve.points.size(); ++i) xt.push_back({static_cast<double>(i), curve.labels[i]});
  const std::vector<Tick> yt = round_ticks(y0, y1);
  ax.grid({}, yt);
  std::vector<Point2> seen, unseen;
  for (std::size_t i = 0; i < curve.points.size(); ++i) {
    const CurvePoint& p = curve.points[i];
    if (!p.valid) continue;
    const double xi = static_cast<double>(i);
    if (std::isfinite(p.lower)) ax.segment({xi, std::max(p.lower, y0)}, {xi, std::min(p.upper, y1)}, kCurveLine, "level-interval");
    (curve.level_seen[i] ? seen : unseen).push_back({xi, p.mu});
  }
  ax.points(seen, Marker{MarkerShape::circle, 5.0, Fill{kInk}}, "level");
  ax.points(unseen, Marker{MarkerShape::circle, 5.0, Fill{figure_style::kWhite}, Stroke{kInk, 0.8}}, "level-unseen");
  ax.x_axis(xt, curve_axis_label(cov));
  ax.y_axis(yt, response_word(spec));
  ax.frame();
}

/// Lines of `text` wrapped to the page's width, drawn from `y` down; returns the next free y.
double paragraph(Figure& fig, const std::string& text, const TextStyle& style, double y) {
  for (const std::string& line : wrap_text(text, style, fig.width() - 2.0 * kCurvePageMargin)) {
    fig.text({kCurvePageMargin, y}, line, style);
    y += style.size * 1.35;
  }
  return y;
}

}  // namespace

Figure response_curves_figure(const ModelSpec& spec, const NicheDescription& d, double confidence) {
  std::string held;
  for (std::size_t c = 0; c < spec.covariates.size(); ++c) {
    const Covariate& cov = spec.covariates[c];
    const double v = d.reference.values[static_cast<Eigen::Index>(c)];
    held += (held.empty() ? "" : ", ") + cov.name + " " +
            (cov.categorical ? cov.levels[static_cast<std::size_t>(v)].name : significant(raw_value(cov, v), 4));
  }
  const std::string subtitle = "Vertical axes: " + response_description(spec) +
                               ". Each panel varies one covariate; the others are held at " + held +
                               " (describe's reference).";
  const std::string notes =
      "Band: " + significant(100.0 * confidence, 3) +
      " % delta-method interval. Shaded: the training range; dashed: the curve beyond it (extrapolation). "
      "Ticks along the bottom: training values; dotted lines: spline boundary knots. Categorical covariates: a "
      "point per level with its interval; hollow: a level absent from the training data.";
  const std::size_t n = d.curves.size();
  const std::size_t rows = std::max<std::size_t>(1, (n + 1) / 2);
  // Measure the wrapped text first so the page is exactly as tall as its content.
  Figure probe(kA4FigureWidth, 100.0);
  const double top = paragraph(probe, subtitle, figure_style::subtitle(), 32.0) + 8.0;
  const double notes_height = paragraph(probe, notes, figure_style::note(), 0.0);
  const double panels_bottom = top + static_cast<double>(rows) * (kCurvePanelHeight + kCurveRowGap);
  Figure fig(kA4FigureWidth, panels_bottom + notes_height + 8.0);
  fig.title = "Response curves" + (spec.name.empty() ? std::string() : ": " + spec.name);
  fig.subject = response_description(spec);
  fig.text({kCurvePageMargin, 18.0}, fig.title, figure_style::title());
  paragraph(fig, subtitle, figure_style::subtitle(), 32.0);
  for (std::size_t i = 0; i < n; ++i) {
    const Rect area{kCurvePlotLeft + static_cast<double>(i % 2) * (kCurvePanelWidth + kCurveColumnGap),
                    top + static_cast<double>(i / 2) * (kCurvePanelHeight + kCurveRowGap), kCurvePanelWidth, kCurvePanelHeight};
    if (d.curves[i].categorical) categorical_panel(fig, area, spec, d.curves[i]);
    else continuous_panel(fig, area, spec, d.curves[i]);
  }
  paragraph(fig, notes, figure_style::note(), panels_bottom + 4.0);
  return fig;
}

}  // namespace habcast
