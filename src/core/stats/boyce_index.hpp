#pragma once
// The continuous Boyce index (Hirzel, Le Lay, Helfer, Randin & Guisan 2006, Ecological Modelling
// 199:142-152) for presence-only evaluation: along the range of predicted suitability, a moving
// window compares the share of presences in the window (P) with the share of the available
// background in it (E). F = P / E should rise with suitability for a good model; the index is the
// Spearman rank correlation between F and the window's position, from -1 to 1.
#include <vector>

namespace habcast {

struct BoyceWindow {
  double lower = 0.0;
  double upper = 0.0;
  double predicted_share = 0.0;  ///< P: presences in the window / all presences
  double expected_share = 0.0;   ///< E: background in the window / all background
  double ratio = 0.0;            ///< F = P / E
};

struct BoyceResult {
  double index = 0.0;                 ///< Spearman correlation of F with the window centres; NaN if undefined
  std::vector<BoyceWindow> windows;   ///< windows with background (E > 0), in increasing suitability
  double range_low = 0.0;             ///< lowest score of presences and background together
  double range_high = 0.0;            ///< highest score of presences and background together
};

/// Windows of width `width_fraction` x (max - min) of all scores (presences and background together), moved in `steps` equal steps
/// from the lowest to the highest score (Hirzel et al. used a width of a tenth of the range).
/// A window includes its edges. Windows without background are left out (F undefined).
BoyceResult boyce_index(const std::vector<double>& presence_scores, const std::vector<double>& background_scores,
                        double width_fraction = 0.1, int steps = 100);

/// Spearman's rank correlation with mid-ranks for ties; NaN when either variable is constant.
double spearman_correlation(const std::vector<double>& a, const std::vector<double>& b);

}  // namespace habcast
