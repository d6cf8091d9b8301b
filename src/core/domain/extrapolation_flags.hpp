#pragma once
// Bit flags of extrapolation.tif. Each bit is one reason a pixel lies outside what the model saw in
// training; a pixel may carry several. Documented in docs/extrapolation-flags.md.
#include <cstdint>
#include <string>
#include <vector>

namespace habcast {

namespace flag {
constexpr std::uint8_t outside_range = 1;       ///< a continuous covariate beyond its training min/max
constexpr std::uint8_t outside_hull = 2;        ///< in range, but outside the convex hull of training points
constexpr std::uint8_t unseen_level = 4;        ///< a categorical level absent from the training samples
constexpr std::uint8_t novel_combination = 8;   ///< in range, but Mahalanobis ratio NT2 above its threshold
constexpr std::uint8_t outside_pair_hull = 16;  ///< in range, but outside the 2-D hull of an interacting pair
constexpr std::uint8_t nodata = 255;            ///< some covariate has no data here
constexpr int cause_count = 5;
constexpr int value_count = 1 << cause_count;   ///< flag values 0 .. value_count - 1 can occur
}  // namespace flag

/// Short name of flag bit `bit` (0..cause_count-1), as used in reports: "outside_range", ...
const char* flag_name(int bit);

/// A plain-language description of a flag value (0..31), e.g. "outside training range + unseen category".
std::string flag_label(std::uint8_t value);

struct FlagColour {
  int value;
  std::uint8_t r, g, b, a;
  std::string label;
};

/// Colour and category name for every value 0..31 plus nodata (255): 0 is light grey
/// ("within training domain"), range extrapolation orange, hull red, pair hulls magenta, level
/// problems purple, NT2 combinations blue; darker with more reasons.
std::vector<FlagColour> flag_colour_table();

}  // namespace habcast
