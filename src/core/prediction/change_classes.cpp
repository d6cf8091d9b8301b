#include "core/prediction/change_classes.hpp"

namespace habcast::change_class {

const char* class_name(std::uint8_t cls) {
  switch (cls) {
    case stable_unsuitable: return "stable unsuitable";
    case stable_suitable: return "stable suitable";
    case gain: return "gain";
    case loss: return "loss";
    case not_distinguishable: return "not distinguishable";
    default: return "no data";
  }
}

const char* class_key(std::uint8_t cls) {
  switch (cls) {
    case stable_unsuitable: return "stable_unsuitable";
    case stable_suitable: return "stable_suitable";
    case gain: return "gain";
    case loss: return "loss";
    case not_distinguishable: return "not_distinguishable";
    default: return "nodata";
  }
}

std::vector<ClassColour> class_colour_table() {
  // Colour-blind-safe hues (blue gain, vermilion loss), greys for the stable classes, yellow for
  // "not distinguishable"; our own choice.
  static const std::uint8_t base[class_count][3] = {
      {189, 189, 189}, {99, 99, 99}, {0, 114, 178}, {213, 94, 0}, {240, 228, 66}};
  std::vector<ClassColour> table;
  for (std::uint8_t c = 1; c <= class_count; ++c) {
    const auto* rgb = base[c - 1];
    for (std::uint8_t mark : {std::uint8_t{0}, baseline_extrapolated, scenario_extrapolated,
                              std::uint8_t(baseline_extrapolated | scenario_extrapolated)}) {
      std::string label = class_name(c);
      if (mark == baseline_extrapolated) label += ", baseline extrapolated";
      if (mark == scenario_extrapolated) label += ", scenario extrapolated";
      if (mark == (baseline_extrapolated | scenario_extrapolated)) label += ", both extrapolated";
      // Marked pixels: halfway to white.
      auto pale = [mark](std::uint8_t v) { return mark ? static_cast<std::uint8_t>((v + 255) / 2) : v; };
      table.push_back({static_cast<std::uint8_t>(c | mark), pale(rgb[0]), pale(rgb[1]), pale(rgb[2]), 255, label});
    }
  }
  table.push_back({nodata, 0, 0, 0, 0, "no data"});
  return table;
}

}  // namespace habcast::change_class
