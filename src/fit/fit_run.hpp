#pragma once
// `habcast fit` as a library call: points + covariate rasters + formula -> IRLS -> model file and
// training samples CSV, ready for predict.
#include <cstdint>
#include <map>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "core/model/model_spec.hpp"
#include "core/stats/coefficient_table.hpp"
#include "core/stats/irls.hpp"
#include "fit/fit_options.hpp"

namespace habcast {

/// A point left out of the fit, and why ("outside the grid", "nodata in elev", ...).
struct DroppedPoint {
  std::string where;   ///< "points.csv:17" or "sites.gpkg: feature 12"
  std::string reason;
};

/// A class of a categorical raster (in its category table, or present in its pixels) that no
/// training point falls in; predict gives its pixels no prediction.
struct UntrainedClass {
  std::string covariate;
  std::int64_t code = 0;
  std::string name;           ///< the category name, or the code
  std::int64_t pixels = 0;    ///< pixels of the raster with this code
  double share = 0.0;         ///< pixels / the raster's valid pixels
};

/// What happened to the points on their way into the fit.
struct PointCounts {
  std::int64_t total = 0;
  std::int64_t not_transformed = 0;   ///< PROJ could not transform them
  std::int64_t outside = 0;           ///< outside the raster grid
  std::int64_t nodata = 0;            ///< on nodata in some covariate
  std::map<std::string, std::int64_t> nodata_by_covariate;
  std::int64_t missing_response = 0;  ///< response, weight or offset missing
  std::int64_t unusable = 0;          ///< a transform or term undefined, or an unknown level
  std::int64_t used = 0;
  std::int64_t shared_pixels = 0;     ///< pixels holding more than one used point
  std::int64_t points_in_shared = 0;  ///< used points in such pixels
  std::vector<std::string> shared_examples;  ///< "a.csv:3 and a.csv:9 share pixel (row 4, column 7)"
  std::int64_t bilinear_fallbacks = 0;
  std::vector<DroppedPoint> dropped;  ///< every point not used, in file order
};

struct FitSummary {
  ModelSpec spec;
  GlmFit fit;
  std::vector<CoefficientRow> table;
  PointCounts counts;
  std::string points_crs_name;
  std::vector<std::string> warnings;
  std::vector<UntrainedClass> untrained_classes;
  std::string model_path;
  std::string samples_path;
};

/// Runs the fit. Throws UsageError, InputError (naming the points file, raster or formula and
/// what to do) or IoError; writes nothing unless the fit succeeds.
FitSummary run_fit(const FitOptions& options, const std::string& tool_version);

/// Plain-text report: counts (and the first few dropped points), fit statistics and the coefficient table.
std::string format_fit_summary(const FitSummary& summary);

/// Everything in the text report, plus every dropped point with its reason, as JSON (fit --json).
nlohmann::ordered_json fit_report_json(const FitSummary& summary);

/// "1 pixel", "3 pixels": a count with its noun in the right number.
std::string count_of(std::int64_t n, const std::string& singular, const std::string& plural);

}  // namespace habcast
