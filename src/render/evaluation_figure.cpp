#include "render/evaluation_figure.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "render/drawing.hpp"

namespace habcast {

namespace {

namespace fs = figure_style;

constexpr double kEvalMargin = 8.0, kPanel = 168.0, kPanelLeft = 50.0, kPanelGap = 76.0, kPanelTop = 68.0;

const Stroke kNoSkill{fs::kGrey, 0.8, {3.0, 2.0}};
Stroke curve() { return {ramp_colour(0.15), 1.4}; }
Fill dot_fill() { return {ramp_colour(0.15), 0.85}; }

std::string fixed(double v, int decimals) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.*f", decimals, v);
  return buf;
}

void panel_title(Figure& fig, double x, const std::string& text) {
  TextStyle t{fs::kAxisTitleSize, true};
  fig.text({x, kPanelTop - 8.0}, text, t, "panel-title");
}

/// A panel's ticks, axis titles and frame, and its own legend below it.
void finish_panel(Figure& fig, Axes& ax, const std::vector<Tick>& xt, const std::vector<Tick>& yt, const std::string& x_title,
                  const std::string& y_title, const Legend& legend) {
  ax.x_axis(xt, x_title);
  ax.y_axis(yt, y_title);
  ax.frame();
  legend.draw(fig, {ax.area().x, kPanelTop + kPanel + 40.0});
}

void roc_panel(Figure& fig, const Discrimination& d) {
  panel_title(fig, kPanelLeft, "ROC curve, AUC " + fixed(d.auc, 3) + " (95 % CI " + fixed(d.auc_lower, 2) + "–" + fixed(d.auc_upper, 2) + ")");
  Axes ax(fig, Rect{kPanelLeft, kPanelTop, kPanel, kPanel}, 0, 1, 0, 1);
  const std::vector<Tick> ticks = round_ticks(0, 1, 5);
  ax.grid(ticks, ticks);
  ax.line({{0, 0}, {1, 1}}, kNoSkill, "no-skill");
  std::vector<Point2> roc;
  for (const RocPoint& p : d.roc) roc.push_back({p.false_positive_rate, p.true_positive_rate});
  ax.line(roc, curve(), "roc");
  const Marker best{MarkerShape::diamond, 6.0, Fill{fs::kWhite}, Stroke{kInk, 1.1}};
  ax.points({{1.0 - d.best.specificity(), d.best.sensitivity()}}, best, "best-threshold");
  Legend legend(kPanel + 20.0);
  legend.line("model", curve());
  legend.line("no skill (AUC 0.5)", kNoSkill);
  legend.marker("largest TSS, " + fixed(d.best.tss(), 3) + ", at threshold " + typeset_number(d.best.threshold, 3), best);
  finish_panel(fig, ax, ticks, ticks, "false positive rate (1 − specificity)", "true positive rate (sensitivity)", legend);
}

void calibration_panel(Figure& fig, const std::vector<CalibrationBin>& bins) {
  const double x = kPanelLeft + kPanel + kPanelGap;
  panel_title(fig, x, "Calibration");
  Axes ax(fig, Rect{x, kPanelTop, kPanel, kPanel}, 0, 1, 0, 1);
  const std::vector<Tick> ticks = round_ticks(0, 1, 5);
  ax.grid(ticks, ticks);
  ax.line({{0, 0}, {1, 1}}, kNoSkill, "perfect-calibration");
  std::int64_t largest = 1;
  for (const CalibrationBin& b : bins) largest = std::max(largest, b.count);
  // Bigger dots for bins of more points, so a bin of few points does not look as certain.
  for (const CalibrationBin& b : bins) {
    if (b.count == 0) continue;
    const double size = 3.0 + 9.0 * std::sqrt(static_cast<double>(b.count) / static_cast<double>(largest));
    ax.points({{b.mean_predicted, b.observed_rate}}, Marker{MarkerShape::circle, size, dot_fill(), Stroke{fs::kWhite, 0.5}}, "calibration-bin");
  }
  Legend legend(kPanel + 20.0);
  legend.marker("bin (larger dot: more points; largest " + std::to_string(largest) + ")", Marker{MarkerShape::circle, 7.0, dot_fill()});
  legend.line("perfect calibration", kNoSkill);
  finish_panel(fig, ax, ticks, ticks, "mean predicted probability", "observed share of presences", legend);
}

void boyce_panel(Figure& fig, const BoyceResult& boyce) {
  const double x = kPanelLeft + kPanel + kPanelGap;
  panel_title(fig, x, "Boyce curve, index " + (std::isfinite(boyce.index) ? fixed(boyce.index, 3) : std::string("undefined")));
  const double lo = boyce.windows.empty() ? 0.0 : boyce.windows.front().lower;
  double hi = boyce.windows.empty() ? 1.0 : boyce.windows.back().upper;
  if (!(hi > lo)) hi = lo + 1.0;
  double top = 1.0;
  for (const BoyceWindow& w : boyce.windows) top = std::max(top, w.ratio);
  const std::vector<Tick> yt = round_ticks(0, top * 1.05, 5);
  const double ymax = std::max(top * 1.05, yt.empty() ? 1.0 : yt.back().value);
  Axes ax(fig, Rect{x, kPanelTop, kPanel, kPanel}, lo, hi, 0, ymax);
  const std::vector<Tick> xt = round_ticks(lo, hi, 5);
  ax.grid(xt, yt);
  ax.line({{lo, 1.0}, {hi, 1.0}}, kNoSkill, "random-expectation");
  std::vector<Point2> curve_points;
  for (const BoyceWindow& w : boyce.windows) curve_points.push_back({(w.lower + w.upper) / 2.0, w.ratio});
  ax.line(curve_points, curve(), "boyce");
  Legend legend(kPanel + 20.0);
  legend.line("presences over background, per window", curve());
  legend.line("as many as by chance (ratio 1)", kNoSkill);
  finish_panel(fig, ax, xt, yt, "suitability (window centre)", "predicted / expected", legend);
}

}  // namespace

Figure evaluation_figure(const Discrimination& d, const std::vector<CalibrationBin>* calibration, const BoyceResult* boyce,
                         const std::string& title) {
  Figure fig(kA4FigureWidth, kPanelTop + kPanel + 100.0);
  fig.title = title;
  fig.subject = "evaluation: ROC curve and " + std::string(calibration ? "calibration" : boyce ? "Boyce curve" : "no second panel");
  std::vector<std::string> lines = wrap_text(title, fs::title(), fig.width() - 2 * kEvalMargin);
  if (lines.size() > 2) lines.resize(2);  // a long path in the title; the file's metadata keeps it whole
  fig.text_lines({kEvalMargin, kEvalMargin + fs::kTitleSize}, lines, fs::title(), 1.2, "title");
  fig.text({kEvalMargin, kEvalMargin + fs::kTitleSize + 2.6 * fs::kSubtitleSize + (lines.size() > 1 ? fs::kTitleSize * 1.2 : 0.0)},
           std::to_string(d.presences) + " presences, " + std::to_string(d.absences) + (boyce ? " background points" : " absences"),
           fs::subtitle(), "subtitle");
  roc_panel(fig, d);
  if (calibration) calibration_panel(fig, *calibration);
  else if (boyce) boyce_panel(fig, *boyce);
  return fig;
}

}  // namespace habcast
