#pragma once
// Per-unit summaries (a reserve, a parcel, a watershed) as sums over pixels weighted by the area
// of each pixel inside the unit. Every quantity is a sum, so partial sums of windows, threads and
// batch tiles merge by addition; the mean, its standard error and the intervals are formed only at
// the end, from the sums.
//
// Standard errors by the delta method on the unit's mean: with g_i = d mu_i / d beta the gradient
// of pixel i's prediction and a_i its area in the unit, the unit mean m = sum a_i mu_i / sum a_i
// has gradient g_bar = sum a_i g_i / sum a_i, so se(m) = sqrt(g_bar' V g_bar). Averaging the
// pixels' own standard errors instead would treat errors that all come from the same coefficients
// as if they were independent of each other or perfectly aligned; neither is right in general
// (docs/units.md works an example).
#include <Eigen/Core>
#include <array>
#include <cstdint>
#include <vector>

#include "core/model/model_spec.hpp"

namespace habcast {

/// Which flag bit each cause slot counts (docs/extrapolation-flags.md): range, hull, unseen class,
/// NT2, pairs.
constexpr std::array<std::uint8_t, 5> kUnitFlagBits{1, 2, 4, 8, 16};

struct UnitSums {
  double area_ha = 0.0;          ///< area of the unit on the raster (inside its extent)
  double data_area_ha = 0.0;     ///< ... where a prediction exists
  double checked_area_ha = 0.0;  ///< ... where the training-domain checks ran (covariates valid)
  double sum_mu = 0.0;           ///< sum a_i mu_i over predicted pixels
  double above_area_ha = 0.0;    ///< area of predicted pixels with mu >= threshold
  double flagged_area_ha = 0.0;  ///< checked area with any extrapolation flag
  std::array<double, 5> cause_area_ha{};  ///< checked area per flag bit (kUnitFlagBits)
  Eigen::VectorXd sum_gradient;  ///< sum a_i d mu_i / d beta (empty until the first predicted pixel)

  void merge(const UnitSums& other);
};

/// The area-weighted share of each pixel in the units that touch one block: entries sorted by
/// pixel, then unit.
struct BlockUnitCover {
  std::vector<std::uint32_t> pixel;  ///< row-major index within the block
  std::vector<std::uint32_t> unit;   ///< index of the unit
  std::vector<double> area_ha;       ///< area of the pixel inside the unit, hectares

  void clear() {
    pixel.clear();
    unit.clear();
    area_ha.clear();
  }
  [[nodiscard]] std::size_t size() const { return pixel.size(); }
  /// Sorts the entries by pixel, then unit (the order in which the predictor adds them). The
  /// entries must have been added unit by unit in increasing unit order, each (pixel, unit) pair
  /// once, as cover_window adds them: then a stable counting sort by pixel gives that order in
  /// linear time (a comparison sort took 6 % of a run's CPU with 1,000 units).
  void sort();

 private:
  std::vector<std::uint32_t> start_;   ///< scratch: first position of each pixel's entries
  std::vector<std::uint32_t> pixel_scratch_, unit_scratch_;
  std::vector<double> area_scratch_;
};

/// Sums of the units touched by one block; merged into the run's totals in block order.
struct BlockUnitSums {
  std::vector<std::uint32_t> units;  ///< units touched, in first-touched order
  std::vector<UnitSums> sums;        ///< parallel to `units`

  /// Slot of `unit`, created when new. `slot_of` maps unit index -> slot + 1 (0: none) and is the
  /// caller's scratch, sized to the number of units; release_slots() leaves it all zero again.
  UnitSums& at(std::uint32_t unit, std::vector<std::uint32_t>& slot_of);
  void release_slots(std::vector<std::uint32_t>& slot_of) const;
};

/// What the unit pass needs beyond the prediction.
struct UnitPass {
  const BlockUnitCover* cover = nullptr;
  BlockUnitSums* sums = nullptr;
  std::vector<std::uint32_t>* slot_of = nullptr;
  double threshold = 0.0;  ///< area above it is counted (mu >= threshold)
  bool with_gradient = false;
};

/// The numbers reported for a unit, formed from its sums.
struct UnitSummary {
  double area_ha = 0.0, data_area_ha = 0.0, nodata_area_ha = 0.0, checked_area_ha = 0.0;
  double mean = 0.0, mean_se = 0.0, mean_lower = 0.0, mean_upper = 0.0;
  double expected_ha = 0.0, expected_se_ha = 0.0, expected_lower_ha = 0.0, expected_upper_ha = 0.0;
  double above_area_ha = 0.0;
  double flagged_share = 0.0;             ///< of the checked area
  std::array<double, 5> cause_share{};    ///< of the checked area, per kUnitFlagBits
  bool has_prediction = false;
  bool has_se = false;
};

/// Forms the summary: mean and its delta-method SE (sqrt(g_bar' V g_bar)); limits at `z` formed on
/// the link scale of the mean (g(m) -/+ z se(m) / g^-1'(g(m)), back-transformed, so they stay
/// in the response's range); the expected area sum a_i mu_i with SE sqrt(G' V G), G = sum a_i g_i,
/// and the same interval scaled by the area with data. `covariance` may be null (no SE).
UnitSummary summarise_unit(const UnitSums& sums, Link link, const Eigen::MatrixXd* covariance, double z);

}  // namespace habcast
