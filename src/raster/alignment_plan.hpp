#pragma once
// Which grid a run works on, and how each covariate reaches it: read as it is when already on
// that grid, else warped by GDAL with a resampling method chosen by the rules of docs/alignment.md.
// Everything here is decided before a pixel is read, so a covariate that cannot be aligned (no
// CRS, a CRS PROJ cannot transform, no overlap, a categorical covariate asked to interpolate)
// stops the run before any output exists.
#include <array>
#include <cstdint>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "core/model/resampling.hpp"
#include "raster/covariate_source.hpp"
#include "raster/raster_grid.hpp"

namespace habcast {

/// One covariate as the command knows it.
struct AlignmentInput {
  std::string name;
  std::string path;
  int band = 1;
  bool categorical = false;
  std::optional<Resampling> resampling;  ///< the model file's `resampling` key, if any
};

/// The target grid, stated in one of three ways (at most one may be given; none: the grid of the
/// first covariate).
struct TargetGridRequest {
  std::string covariate;            ///< the grid of this covariate's raster
  std::string template_path;        ///< the grid of this raster
  std::string crs;                  ///< with resolution and bounds: any CRS text GDAL reads (EPSG:32630, WKT, ...)
  std::vector<double> resolution;   ///< X or X,Y pixel size in CRS units
  std::vector<double> bounds;       ///< XMIN,YMIN,XMAX,YMAX in CRS units
};

struct AlignmentOptions {
  TargetGridRequest target;
  std::map<std::string, Resampling> resampling;  ///< command-line overrides, covariate -> method
  /// GDAL's approximate transformer error, in source pixels (gdalwarp's -et). 0, the default,
  /// transforms every pixel exactly: values then equal gdalwarp -et 0 and do not depend on how
  /// the target is cut into windows; gdalwarp's own default, 0.125, is faster.
  double error_threshold = 0.0;
};

/// How one covariate reaches the target grid.
struct AlignedCovariate {
  AlignmentInput input;
  RasterGrid source;              ///< the raster's own grid
  bool warped = false;            ///< false: already on the target grid, read as it is
  Resampling resampling = Resampling::nearest;  ///< used when warped
  std::string resampling_rule;    ///< why this method: "model file", "--resampling", or the default rule
  double pixel_ratio = 1.0;       ///< target pixel edge / source pixel edge, both in target CRS units
  bool partial = false;           ///< its extent does not hold the whole target extent
  std::array<double, 4> extent_in_target{};  ///< xmin, ymin, xmax, ymax of its extent in the target CRS
};

struct AlignmentPlan {
  RasterGrid target;
  std::string target_rule;  ///< where the target grid comes from, in words
  std::vector<AlignedCovariate> covariates;
  double error_threshold = 0.0;

  [[nodiscard]] bool any_warped() const;
};

/// A target pixel at least this many source pixels across (edge ratio) counts as "much coarser":
/// continuous covariates are averaged and categorical ones take the mode instead of being sampled
/// at one point. Common practice, no source: from a ratio of 2 a 2 x 2 bilinear neighbourhood no
/// longer spans the target pixel, so some source pixels would not count at all.
constexpr double kCoarseningRatio = 2.0;

/// Decides the target grid and each covariate's path to it. Throws UsageError for a malformed or
/// contradictory target request or resampling override, InputError for inputs that cannot be
/// aligned (messages name the covariate, its file and both extents or CRSs).
AlignmentPlan plan_alignment(const std::vector<AlignmentInput>& inputs, const AlignmentOptions& options);

/// A new source for covariate `index` of the plan, with handles of its own (one per worker).
std::unique_ptr<CovariateSource> open_covariate_source(const AlignmentPlan& plan, std::size_t index,
                                                       int decode_threads = 1);

/// Warnings for the run: partial coverage per covariate with the share of target pixels it left
/// without a value (`missing[i]` pixels of `total`).
std::vector<std::string> alignment_warnings(const AlignmentPlan& plan, const std::vector<std::int64_t>& missing,
                                            std::int64_t total);

/// The report's "alignment" section: target grid and, per covariate, source, grid, CRS,
/// resolution, resampling and the share of target pixels without a value.
nlohmann::ordered_json alignment_json(const AlignmentPlan& plan, const std::vector<std::int64_t>& missing,
                                      std::int64_t total);

/// The same, as GeoTIFF metadata items (HABCAST_TARGET_GRID, HABCAST_COVARIATE_<NAME>).
std::vector<std::pair<std::string, std::string>> alignment_metadata(const AlignmentPlan& plan,
                                                                    const std::vector<std::int64_t>& missing,
                                                                    std::int64_t total);

/// "1000 x 800 pixels, 30 x 30 metre, WGS 84 / UTM zone 30N", for messages and reports.
std::string grid_summary(const RasterGrid& grid);

}  // namespace habcast
