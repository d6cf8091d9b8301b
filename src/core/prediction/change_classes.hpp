#pragma once
// The classes of a change map at a suitability threshold, and how a class is marked where the
// baseline or the scenario pixel lies outside the training data. One byte per pixel:
//   value & 15  the class (1..5 below), bit 16 baseline extrapolated, bit 32 scenario extrapolated,
//   255 no data (either side has no prediction).
#include <cstdint>
#include <string>
#include <vector>

namespace habcast::change_class {

constexpr std::uint8_t stable_unsuitable = 1;    ///< below the threshold in both
constexpr std::uint8_t stable_suitable = 2;      ///< at or above the threshold in both
constexpr std::uint8_t gain = 3;                 ///< crosses upwards, the change's interval excludes zero
constexpr std::uint8_t loss = 4;                 ///< crosses downwards, the change's interval excludes zero
constexpr std::uint8_t not_distinguishable = 5;  ///< crosses the threshold, but the interval includes zero
constexpr std::uint8_t class_count = 5;
constexpr std::uint8_t baseline_extrapolated = 16;
constexpr std::uint8_t scenario_extrapolated = 32;
constexpr std::uint8_t nodata = 255;

/// The class of one pixel. `lower`/`upper`: the change's confidence limits.
inline std::uint8_t classify(double baseline, double scenario, double threshold, double lower, double upper) {
  const bool was = baseline >= threshold;
  const bool is = scenario >= threshold;
  if (was == is) return was ? stable_suitable : stable_unsuitable;
  if (lower <= 0.0 && upper >= 0.0) return not_distinguishable;
  return is ? gain : loss;
}

/// "gain", "stable suitable", ... for class 1..5.
const char* class_name(std::uint8_t cls);
/// snake_case key for reports: "stable_unsuitable", ...
const char* class_key(std::uint8_t cls);

struct ClassColour {
  std::uint8_t value, r, g, b, a;
  std::string label;
};

/// Colour and category name of every value that can occur (1..5, each with its three marks) and
/// of nodata: the class's colour, paler where either side is extrapolated, so a map of "loss"
/// shows at a glance where that loss lies outside the training data.
std::vector<ClassColour> class_colour_table();

}  // namespace habcast::change_class
