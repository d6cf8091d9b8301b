#include "core/domain/extrapolation_flags.hpp"

#include <algorithm>

namespace habcast {

const char* flag_name(int bit) {
  switch (bit) {
    case 0: return "outside_range";
    case 1: return "outside_hull";
    case 2: return "unseen_level";
    case 3: return "novel_combination";
    case 4: return "outside_pair_hull";
    default: return "unknown";
  }
}

namespace {
const char* flag_phrase(int bit) {
  switch (bit) {
    case 0: return "outside training range";
    case 1: return "outside training hull";
    case 2: return "unseen category";
    case 3: return "novel combination (NT2)";
    case 4: return "outside hull of an interacting pair";
    default: return "?";
  }
}
}  // namespace

std::string flag_label(std::uint8_t value) {
  if (value == 0) return "within training domain";
  if (value == flag::nodata) return "no data";
  std::string label;
  for (int bit = 0; bit < flag::cause_count; ++bit)
    if (value & (1u << bit)) label += (label.empty() ? "" : " + ") + std::string(flag_phrase(bit));
  return label;
}

std::vector<FlagColour> flag_colour_table() {
  // Base colours per cause; a combination takes the colour of its most severe cause, darkened by
  // how many causes it has, so one legend reads both "why" and "how many reasons".
  struct Rgb {
    int r, g, b;
  };
  const Rgb range{245, 160, 40};      // orange: beyond the range of a covariate
  const Rgb hull{215, 48, 39};        // red: outside the joint training hull
  const Rgb level{150, 80, 170};      // purple: unseen category
  const Rgb combination{60, 120, 200};  // blue: novel combination inside the ranges
  const Rgb pair{200, 60, 160};       // magenta: an interacting pair never seen together
  std::vector<FlagColour> table;
  table.push_back({0, 225, 225, 225, 255, flag_label(0)});
  for (int v = 1; v < flag::value_count; ++v) {
    Rgb base = combination;
    if (v & flag::unseen_level) base = level;
    if (v & flag::outside_pair_hull) base = pair;
    if (v & flag::outside_range) base = range;
    if (v & flag::outside_hull) base = hull;
    int causes = 0;
    for (int bit = 0; bit < flag::cause_count; ++bit) causes += (v >> bit) & 1;
    const double shade = 1.0 - 0.18 * (causes - 1);
    auto scale = [&](int c) { return static_cast<std::uint8_t>(std::clamp(static_cast<int>(c * shade), 0, 255)); };
    table.push_back({v, scale(base.r), scale(base.g), scale(base.b), 255, flag_label(static_cast<std::uint8_t>(v))});
  }
  table.push_back({flag::nodata, 0, 0, 0, 0, flag_label(flag::nodata)});
  return table;
}

}  // namespace habcast
