#include "render/evaluation_svg.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>

namespace habcast {

namespace {

constexpr double kPanel = 300.0;  // plot square, px
constexpr double kMargin = 50.0;

std::string f(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.2f", v);
  return buf;
}

std::string escape(const std::string& s) {
  std::string out;
  for (char c : s) {
    if (c == '&') out += "&amp;";
    else if (c == '<') out += "&lt;";
    else if (c == '>') out += "&gt;";
    else out += c;
  }
  return out;
}

/// Axes, ticks at 0, 0.5, 1 (or the given maximum) and labels of one panel at horizontal offset `ox`.
void axes(std::ostringstream& os, double ox, const std::string& title, const std::string& xlabel, const std::string& ylabel,
          double ymax) {
  const double oy = kMargin;
  os << "<g font-family=\"sans-serif\" font-size=\"12\">\n";
  os << "<rect x=\"" << f(ox) << "\" y=\"" << f(oy) << "\" width=\"" << f(kPanel) << "\" height=\"" << f(kPanel)
     << "\" fill=\"none\" stroke=\"#333\"/>\n";
  for (double t : {0.0, 0.5, 1.0}) {
    const double px = ox + t * kPanel;
    const double py = oy + kPanel - t * kPanel;
    os << "<text x=\"" << f(px) << "\" y=\"" << f(oy + kPanel + 16) << "\" text-anchor=\"middle\">" << f(t) << "</text>\n";
    os << "<text x=\"" << f(ox - 6) << "\" y=\"" << f(py + 4) << "\" text-anchor=\"end\">" << f(t * ymax) << "</text>\n";
  }
  os << "<text x=\"" << f(ox + kPanel / 2) << "\" y=\"" << f(oy - 12) << "\" text-anchor=\"middle\" font-weight=\"bold\">"
     << escape(title) << "</text>\n";
  os << "<text x=\"" << f(ox + kPanel / 2) << "\" y=\"" << f(oy + kPanel + 36) << "\" text-anchor=\"middle\">" << escape(xlabel)
     << "</text>\n";
  os << "<text transform=\"translate(" << f(ox - 36) << "," << f(oy + kPanel / 2) << ") rotate(-90)\" text-anchor=\"middle\">"
     << escape(ylabel) << "</text>\n</g>\n";
}

std::string point(double ox, double x, double y, double ymax) {
  return f(ox + x * kPanel) + "," + f(kMargin + kPanel - std::min(y / ymax, 1.0) * kPanel);
}

}  // namespace

std::string evaluation_svg(const Discrimination& d, const std::vector<CalibrationBin>* calibration, const BoyceResult* boyce,
                           const std::string& title) {
  const double width = 2 * (kPanel + 2 * kMargin);
  const double height = kPanel + 2 * kMargin + 30;
  std::ostringstream os;
  os << "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"" << f(width) << "\" height=\"" << f(height) << "\" viewBox=\"0 0 "
     << f(width) << " " << f(height) << "\">\n<title>" << escape(title) << "</title>\n";
  os << "<rect width=\"100%\" height=\"100%\" fill=\"white\"/>\n";

  // ROC: true positive rate against false positive rate; the diagonal is a model without skill.
  const double ox1 = kMargin;
  axes(os, ox1, "ROC curve, AUC " + f(d.auc), "false positive rate (1 - specificity)", "true positive rate (sensitivity)", 1.0);
  os << "<polyline fill=\"none\" stroke=\"#999\" stroke-dasharray=\"4 3\" points=\"" << point(ox1, 0, 0, 1) << " "
     << point(ox1, 1, 1, 1) << "\"/>\n<polyline fill=\"none\" stroke=\"#1f5fa8\" stroke-width=\"2\" points=\"";
  for (const RocPoint& p : d.roc) os << point(ox1, p.false_positive_rate, p.true_positive_rate, 1) << " ";
  os << "\"/>\n";
  const double fpr = 1.0 - d.best.specificity();
  const double tpr = d.best.sensitivity();
  os << "<circle cx=\"" << f(ox1 + fpr * kPanel) << "\" cy=\"" << f(kMargin + kPanel - tpr * kPanel)
     << "\" r=\"4\" fill=\"#c0392b\"><title>max TSS " << f(d.best.tss()) << " at threshold " << d.best.threshold
     << "</title></circle>\n";

  const double ox2 = kPanel + 3 * kMargin;
  if (calibration) {
    axes(os, ox2, "Calibration", "mean predicted probability", "observed share of presences", 1.0);
    os << "<polyline fill=\"none\" stroke=\"#999\" stroke-dasharray=\"4 3\" points=\"" << point(ox2, 0, 0, 1) << " "
       << point(ox2, 1, 1, 1) << "\"/>\n";
    for (const CalibrationBin& b : *calibration) {
      if (b.count == 0) continue;
      const double r = 3.0 + std::min(6.0, std::sqrt(static_cast<double>(b.count)) / 2.0);  // bigger bins, bigger dots
      os << "<circle cx=\"" << f(ox2 + b.mean_predicted * kPanel) << "\" cy=\""
         << f(kMargin + kPanel - b.observed_rate * kPanel) << "\" r=\"" << f(r) << "\" fill=\"#1f5fa8\" fill-opacity=\"0.7\">"
         << "<title>" << b.count << " points, " << b.presences << " presences</title></circle>\n";
    }
  } else if (boyce) {
    double ymax = 1.0;
    for (const BoyceWindow& w : boyce->windows) ymax = std::max(ymax, w.ratio);
    ymax = std::ceil(ymax);
    double lo = boyce->windows.empty() ? 0.0 : boyce->windows.front().lower;
    double hi = boyce->windows.empty() ? 1.0 : boyce->windows.back().upper;
    if (!(hi > lo)) hi = lo + 1.0;
    axes(os, ox2, "Boyce curve, index " + f(boyce->index), "suitability (share of its range)", "predicted / expected", ymax);
    os << "<polyline fill=\"none\" stroke=\"#999\" stroke-dasharray=\"4 3\" points=\"" << point(ox2, 0, 1, ymax) << " "
       << point(ox2, 1, 1, ymax) << "\"/>\n<polyline fill=\"none\" stroke=\"#1f5fa8\" stroke-width=\"2\" points=\"";
    for (const BoyceWindow& w : boyce->windows) os << point(ox2, ((w.lower + w.upper) / 2 - lo) / (hi - lo), w.ratio, ymax) << " ";
    os << "\"/>\n";
  }
  os << "<text x=\"" << f(kMargin) << "\" y=\"" << f(height - 8) << "\" font-family=\"sans-serif\" font-size=\"11\" fill=\"#555\">"
     << escape(title) << "</text>\n</svg>\n";
  return os.str();
}

}  // namespace habcast
