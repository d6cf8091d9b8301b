#include "render/legend.hpp"

#include <algorithm>

#include "render/text_metrics.hpp"

namespace habcast {

namespace {

constexpr double kKey = 18.0;        // width of the column of marks, points
constexpr double kKeyGap = 5.0;      // between a mark and its label
constexpr double kRowGap = 3.5;      // between rows
constexpr double kLeading = 1.25;    // line spacing of wrapped labels, in font sizes
constexpr double kStep = 11.0;       // height of one step of a stepped colour bar
constexpr double kBarWidth = 12.0;   // width of colour bars

}  // namespace

Legend::Legend(double width, TextStyle label) : width_(width), label_(label) {
  label_.anchor = Anchor::start;
  label_.baseline = Baseline::top;
}

void Legend::heading(const std::string& text) { entries_.emplace_back(Heading{text}); }
void Legend::line(const std::string& label, const Stroke& stroke) { entries_.emplace_back(LineKey{label, stroke}); }
void Legend::marker(const std::string& label, const Marker& marker) { entries_.emplace_back(MarkerKey{label, marker}); }
void Legend::swatch(const std::string& label, const Fill& fill, std::optional<Stroke> outline, std::optional<Hatch> hatch) {
  entries_.emplace_back(SwatchKey{label, fill, std::move(outline), std::move(hatch)});
}
void Legend::colour_steps(const std::vector<Rgb>& colours, const std::vector<std::string>& edges) {
  entries_.emplace_back(Steps{colours, edges});
}
void Legend::colour_ramp(const std::vector<std::pair<double, std::string>>& labels, double bar_height,
                         std::function<Rgb(double)> colours) {
  entries_.emplace_back(Ramp{labels, bar_height, std::move(colours)});
}
void Legend::gap(double points) { entries_.emplace_back(Gap{points}); }

namespace {

TextStyle heading_style(const TextStyle& label) {
  TextStyle h = figure_style::legend_heading();
  h.anchor = Anchor::start;
  h.baseline = Baseline::top;
  h.size = label.size + 0.5;
  return h;
}

double lines_height(std::size_t lines, const TextStyle& style) {
  return lines == 0 ? 0.0 : (static_cast<double>(lines - 1) * kLeading + 1.2) * style.size;
}

}  // namespace

double Legend::entry_height(const Entry& e) const {
  const double label_width = width_ - kKey - kKeyGap;
  return std::visit(
      [&](const auto& x) -> double {
        using T = std::decay_t<decltype(x)>;
        if constexpr (std::is_same_v<T, Heading>) {
          const TextStyle h = heading_style(label_);
          return lines_height(wrap_text(x.text, h, width_).size(), h) + kRowGap;
        } else if constexpr (std::is_same_v<T, Steps>) {
          return kStep * static_cast<double>(x.colours.size()) + kRowGap;
        } else if constexpr (std::is_same_v<T, Ramp>) {
          return x.height + kRowGap;
        } else if constexpr (std::is_same_v<T, Gap>) {
          return x.height;
        } else {
          return std::max(lines_height(wrap_text(x.label, label_, label_width).size(), label_), 9.0) + kRowGap;
        }
      },
      e);
}

double Legend::height() const {
  double h = 0.0;
  for (const Entry& e : entries_) h += entry_height(e);
  return h;
}

double Legend::draw(Figure& figure, Point2 top_left, const std::string& role) const {
  const double x = top_left.x, label_x = x + kKey + kKeyGap, label_width = width_ - kKey - kKeyGap;
  double y = top_left.y;
  TextStyle edge = label_;
  edge.baseline = Baseline::middle;
  for (const Entry& e : entries_) {
    const double mid = y + 0.6 * label_.size;  // the middle of a label's first line
    std::visit(
        [&](const auto& k) {
          using T = std::decay_t<decltype(k)>;
          if constexpr (std::is_same_v<T, Heading>) {
            const TextStyle h = heading_style(label_);
            figure.text_lines({x, y}, wrap_text(k.text, h, width_), h, kLeading, role + "-heading");
          } else if constexpr (std::is_same_v<T, LineKey>) {
            figure.line({x, mid}, {x + kKey, mid}, k.stroke, role + "-key");
          } else if constexpr (std::is_same_v<T, MarkerKey>) {
            figure.markers({{x + kKey / 2.0, mid}}, k.marker, role + "-key");
          } else if constexpr (std::is_same_v<T, SwatchKey>) {
            const Rect r{x + 2.0, mid - 4.5, kKey - 4.0, 9.0};
            figure.add({PathMark{{{r.x, r.y}, {r.right(), r.y}, {r.right(), r.bottom()}, {r.x, r.bottom()}}, true, k.fill, k.outline, k.hatch},
                        std::nullopt, role + "-key"});
          } else if constexpr (std::is_same_v<T, Steps>) {
            const std::size_t n = k.colours.size();
            for (std::size_t i = 0; i < n; ++i) {
              const double top = y + kStep * static_cast<double>(n - 1 - i);
              figure.rect({x, top, kBarWidth, kStep}, Fill{k.colours[i]}, std::nullopt, role + "-step");
            }
            figure.rect({x, y, kBarWidth, kStep * static_cast<double>(n)}, std::nullopt, Stroke{kInk, 0.5}, role + "-key");
            for (std::size_t i = 0; i < k.edges.size() && i + 1 < n; ++i) {
              const double at = y + kStep * static_cast<double>(n - 1 - i);
              figure.line({x + kBarWidth, at}, {x + kBarWidth + 2.5, at}, Stroke{kInk, 0.5}, role + "-key");
              figure.text({x + kBarWidth + 4.0, at}, k.edges[i], edge, role + "-value");
            }
          } else if constexpr (std::is_same_v<T, Ramp>) {
            IndexedImage bar;
            bar.width = 1;
            bar.height = 256;
            for (int i = 0; i < 256; ++i) {
              bar.index.push_back(static_cast<std::uint8_t>(255 - i));
              bar.palette.push_back(k.colours(i / 255.0));
            }
            figure.image({x, y, kBarWidth, k.height}, std::move(bar), role + "-ramp");
            figure.rect({x, y, kBarWidth, k.height}, std::nullopt, Stroke{kInk, 0.5}, role + "-key");
            for (const auto& [position, text] : k.labels) {
              const double at = y + (1.0 - position) * k.height;
              figure.line({x + kBarWidth, at}, {x + kBarWidth + 2.5, at}, Stroke{kInk, 0.5}, role + "-key");
              figure.text({x + kBarWidth + 4.0, at}, text, edge, role + "-value");
            }
          }
          if constexpr (std::is_same_v<T, LineKey> || std::is_same_v<T, MarkerKey> || std::is_same_v<T, SwatchKey>)
            figure.text_lines({label_x, y}, wrap_text(k.label, label_, label_width), label_, kLeading, role + "-label");
        },
        e);
    y += entry_height(e);
  }
  return y;
}

}  // namespace habcast
