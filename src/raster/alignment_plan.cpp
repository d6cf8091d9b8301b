#include "raster/alignment_plan.hpp"

#include <cpl_string.h>
#include <gdal_alg.h>
#include <ogr_spatialref.h>

#include <algorithm>
#include <cmath>

#include "core/base/error.hpp"
#include "core/base/number_text.hpp"
#include "raster/gdal_handles.hpp"
#include "raster/gdal_session.hpp"
#include "raster/warped_source.hpp"

namespace habcast {

namespace {

using Extent = std::array<double, 4>;  // xmin, ymin, xmax, ymax

Extent extent_of(const RasterGrid& grid) {
  const auto& gt = grid.geotransform;
  Extent e{INFINITY, INFINITY, -INFINITY, -INFINITY};
  for (const double column : {0.0, static_cast<double>(grid.width)}) {
    for (const double row : {0.0, static_cast<double>(grid.height)}) {
      const double x = gt[0] + gt[1] * column + gt[2] * row;
      const double y = gt[3] + gt[4] * column + gt[5] * row;
      e = {std::min(e[0], x), std::min(e[1], y), std::max(e[2], x), std::max(e[3], y)};
    }
  }
  return e;
}

std::string extent_text(const Extent& e) {
  return "x " + significant(e[0], 10) + " to " + significant(e[2], 10) + ", y " + significant(e[1], 10) + " to " +
         significant(e[3], 10);
}

std::string crs_name(const RasterGrid& grid) {
  if (grid.crs_wkt.empty()) return "no CRS";
  return grid.crs_name.empty() ? std::string("an unnamed CRS") : grid.crs_name;
}

OGRSpatialReference srs_of(const std::string& path, const RasterGrid& grid) {
  OGRSpatialReference srs;
  if (srs.importFromWkt(grid.crs_wkt.c_str()) != OGRERR_NONE)
    throw InputError(located(path, 0, "has a CRS that GDAL cannot parse. Assign a valid CRS (for example with "
                                      "gdal_edit.py -a_srs EPSG:<code>)."));
  srs.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  return srs;
}

void describe_crs(const OGRSpatialReference& srs, RasterGrid& grid) {
  const char* const options[] = {"FORMAT=WKT2_2019", nullptr};
  char* wkt = nullptr;
  srs.exportToWkt(&wkt, options);
  const std::unique_ptr<char, CplFree> owned(wkt);
  grid.crs_wkt = wkt != nullptr ? wkt : "";
  grid.crs_name = srs.GetName() != nullptr ? srs.GetName() : "";
  if (srs.IsProjected()) {
    const char* unit_name = nullptr;
    grid.linear_units_to_metre = srs.GetLinearUnits(&unit_name);
    grid.linear_units = unit_name != nullptr ? unit_name : "";
  }
}

bool on_same_grid(const std::string& target_path, const RasterGrid& target, const std::string& path,
                  const RasterGrid& grid) {
  try {
    check_same_grid(target_path, target, path, grid);
    return true;
  } catch (const InputError&) {
    return false;  // which way it differs does not matter: the warper handles every way
  }
}

/// A whole number of pixels from `length` / `pixel`, or a UsageError naming both ways to fix it.
int pixel_count(double length, double pixel, const char* axis) {
  const double count = length / pixel;
  const double whole = std::round(count);
  if (!(whole >= 1.0))
    throw UsageError(std::string("the target grid has zero size: its ") + axis + " extent (" + significant(length, 10) +
                     ") holds no pixel of " + significant(pixel, 10) + ". Give --grid-bounds with XMIN < XMAX and "
                     "YMIN < YMAX, at least one pixel apart.");
  if (std::abs(count - whole) > 1e-6 * std::max(1.0, whole))
    throw UsageError(std::string("--grid-bounds and --grid-resolution disagree: the ") + axis + " extent " +
                     significant(length, 12) + " is " + significant(count, 10) + " pixels of " + significant(pixel, 10) +
                     ", not a whole number. It could mean a smaller or a larger extent, or another resolution; "
                     "state one: change the bounds to a multiple of the resolution, or the resolution to a divisor "
                     "of the extent.");
  if (whole > 2147483647.0) throw UsageError("the target grid is too large (" + significant(whole, 6) + " pixels on one side)");
  return static_cast<int>(whole);
}

RasterGrid explicit_grid(const TargetGridRequest& r) {
  if (r.crs.empty() || r.resolution.empty() || r.bounds.empty())
    throw UsageError("a stated target grid needs all three of --grid-crs, --grid-resolution and --grid-bounds (got " +
                     std::string(r.crs.empty() ? "no" : "a") + " CRS, " + (r.resolution.empty() ? "no" : "a") +
                     " resolution, " + (r.bounds.empty() ? "no" : "") + " bounds)");
  if (r.resolution.size() > 2) throw UsageError("--grid-resolution takes X or X,Y (pixel size in CRS units)");
  if (r.bounds.size() != 4) throw UsageError("--grid-bounds takes XMIN,YMIN,XMAX,YMAX in the CRS's units");
  const double xres = r.resolution[0];
  const double yres = r.resolution.size() == 2 ? r.resolution[1] : r.resolution[0];
  if (!(xres > 0.0 && yres > 0.0 && std::isfinite(xres) && std::isfinite(yres)))
    throw UsageError("--grid-resolution must be positive, got " + significant(xres, 10) + ", " + significant(yres, 10));
  for (double b : r.bounds)
    if (!std::isfinite(b)) throw UsageError("--grid-bounds must be finite numbers");
  OGRSpatialReference srs;
  take_gdal_error();
  if (srs.SetFromUserInput(r.crs.c_str()) != OGRERR_NONE)
    throw UsageError("--grid-crs \"" + r.crs + "\" is not a CRS GDAL knows (" + gdal_reason() +
                     "); give for example EPSG:32630, a WKT string or a file holding one");
  RasterGrid grid;
  grid.width = pixel_count(r.bounds[2] - r.bounds[0], xres, "x");
  grid.height = pixel_count(r.bounds[3] - r.bounds[1], yres, "y");
  grid.geotransform = {r.bounds[0], xres, 0.0, r.bounds[3], 0.0, -yres};
  grid.has_geotransform = true;
  describe_crs(srs, grid);
  return grid;
}

std::string names_of(const std::vector<AlignmentInput>& inputs) {
  std::string s;
  for (const AlignmentInput& in : inputs) s += (s.empty() ? "" : ", ") + in.name;
  return s;
}

struct Target {
  RasterGrid grid;
  std::string path;  ///< file the grid is read from, for messages ("" for a stated grid)
  std::string rule;
};

Target choose_target(const std::vector<AlignmentInput>& inputs, const std::vector<RasterGrid>& grids,
                     const TargetGridRequest& r) {
  const bool by_covariate = !r.covariate.empty();
  const bool by_template = !r.template_path.empty();
  const bool by_statement = !r.crs.empty() || !r.resolution.empty() || !r.bounds.empty();
  if (static_cast<int>(by_covariate) + static_cast<int>(by_template) + static_cast<int>(by_statement) > 1)
    throw UsageError("the target grid is stated more than once (--grid-of, --grid-like and --grid-crs/--grid-resolution/"
                     "--grid-bounds are alternatives); give one");
  if (by_covariate) {
    for (std::size_t i = 0; i < inputs.size(); ++i)
      if (inputs[i].name == r.covariate)
        return {grids[i], inputs[i].path, "the grid of covariate " + r.covariate + " (" + inputs[i].path + "; --grid-of)"};
    throw UsageError("--grid-of " + r.covariate + ": no covariate of that name; the covariates are " + names_of(inputs));
  }
  if (by_template) {
    return {read_grid(r.template_path), r.template_path, "the grid of " + r.template_path + " (--grid-like)"};
  }
  if (by_statement) {
    return {explicit_grid(r), "", "stated: --grid-crs " + r.crs + ", --grid-resolution and --grid-bounds"};
  }
  return {grids.front(), inputs.front().path,
          "the grid of covariate " + inputs.front().name + " (" + inputs.front().path +
              "), the first in the model file (default; choose another with --grid-of, --grid-like or --grid-crs)"};
}

void check_target(const Target& t) {
  const std::string where = t.path.empty() ? std::string("the stated target grid") : "the target grid (" + t.rule + ")";
  if (t.grid.width <= 0 || t.grid.height <= 0)
    throw InputError(where + " has zero size (" + std::to_string(t.grid.width) + " x " + std::to_string(t.grid.height) +
                     " pixels); give a target grid with at least one pixel");
  if (t.grid.has_geotransform && !(t.grid.pixel_area() > 0.0 && std::isfinite(t.grid.pixel_area())))
    throw InputError(where + " has pixels of no area; fix its georeferencing");
}

/// Target pixel edge over source pixel edge, both measured in the target CRS.
double pixel_ratio(const AlignedCovariate& c, const RasterGrid& target) {
  const double target_edge = std::sqrt(target.pixel_area());
  const OGRSpatialReference s = srs_of(c.input.path, c.source);
  const OGRSpatialReference t = srs_of(c.input.path, target);
  const char* const same_options[] = {"IGNORE_DATA_AXIS_TO_SRS_AXIS_MAPPING=YES", nullptr};
  if (s.IsSame(&t, same_options)) return target_edge / std::sqrt(c.source.pixel_area());
  // GDAL's own estimate of the source's resolution in the target CRS (what gdalwarp would choose).
  const DatasetPtr dataset = open_input_raster(c.input.path);
  const std::unique_ptr<char*, void (*)(char**)> options(CSLSetNameValue(nullptr, "DST_SRS", target.crs_wkt.c_str()),
                                                         CSLDestroy);
  void* transformer = GDALCreateGenImgProjTransformer2(GDALDataset::ToHandle(dataset.get()), nullptr, options.get());
  if (transformer == nullptr) return 1.0;  // reported with both CRSs by the coverage check
  double gt[6];
  double extent[4];
  int width = 0;
  int height = 0;
  const CPLErr result = GDALSuggestedWarpOutput2(GDALDataset::ToHandle(dataset.get()), GDALGenImgProjTransform,
                                                 transformer, gt, &width, &height, extent, 0);
  GDALDestroyGenImgProjTransformer(transformer);
  take_gdal_error();
  if (result != CE_None || !(std::abs(gt[1]) > 0.0)) return 1.0;
  return target_edge / std::abs(gt[1]);
}

void check_crs_pair(const AlignedCovariate& c, const RasterGrid& target, const std::string& target_rule) {
  if (c.source.crs_wkt.empty() == target.crs_wkt.empty() && !c.source.crs_wkt.empty()) return;
  const std::string lead = "covariate " + c.input.name + " (" + c.input.path + ") is not on the target grid (" +
                           target_rule + ") and ";
  if (c.source.crs_wkt.empty() && target.crs_wkt.empty())
    throw InputError(lead + "neither has a CRS, so it cannot tell whether their coordinates are the same kind: "
                            "assign both their CRSs (gdal_edit.py -a_srs EPSG:<code>), or bring the raster onto the "
                            "target grid first.");
  if (c.source.crs_wkt.empty())
    throw InputError(lead + "has no CRS, so it could be in the target's CRS (" + crs_name(target) +
                     ") or in another: assign its CRS (gdal_edit.py -a_srs EPSG:<code> " + c.input.path + ").");
  throw InputError(lead + "the target grid has no CRS, so the raster's coordinates (" + crs_name(c.source) +
                   ") cannot be placed on it: give a target grid with a CRS (--grid-of, --grid-like or --grid-crs).");
}

/// The covariate's extent in the target CRS; InputError when PROJ cannot transform between them.
Extent extent_in_target(const AlignedCovariate& c, const RasterGrid& target) {
  const Extent own = extent_of(c.source);
  OGRSpatialReference s = srs_of(c.input.path, c.source);
  OGRSpatialReference t = srs_of(c.input.path, target);
  const char* const same_options[] = {"IGNORE_DATA_AXIS_TO_SRS_AXIS_MAPPING=YES", nullptr};
  if (s.IsSame(&t, same_options)) return own;
  take_gdal_error();
  const std::unique_ptr<OGRCoordinateTransformation, TransformDeleter> transform(
      OGRCreateCoordinateTransformation(&s, &t));
  const std::string problem = "PROJ cannot transform covariate " + c.input.name + " (" + c.input.path + ", " +
                              crs_name(c.source) + ") into the target CRS (" + crs_name(target) + ")";
  if (!transform)
    throw InputError(problem + ": " + gdal_reason() +
                     ". Check both CRSs (gdalsrsinfo), or choose a target grid in a CRS it can reach.");
  Extent e{};
  if (!transform->TransformBounds(own[0], own[1], own[2], own[3], &e[0], &e[1], &e[2], &e[3], 21) ||
      !std::isfinite(e[0]) || !std::isfinite(e[1]) || !std::isfinite(e[2]) || !std::isfinite(e[3]))
    throw InputError(problem + ": its extent (" + extent_text(own) + ") does not transform (" + gdal_reason() +
                     "). Choose a target CRS that holds the covariate's area.");
  take_gdal_error();
  return e;
}

void choose_resampling(AlignedCovariate& c, const AlignmentOptions& options) {
  const bool coarse = c.pixel_ratio >= kCoarseningRatio;
  if (const auto it = options.resampling.find(c.input.name); it != options.resampling.end()) {
    c.resampling = it->second;
    c.resampling_rule = "--resampling";
  } else if (c.input.resampling) {
    c.resampling = *c.input.resampling;
    c.resampling_rule = "model file";
  } else if (c.input.categorical) {
    c.resampling = coarse ? Resampling::mode : Resampling::nearest;
    c.resampling_rule = coarse ? "default for a categorical covariate on a target much coarser than its pixels"
                               : "default for a categorical covariate";
  } else {
    c.resampling = coarse ? Resampling::average : Resampling::bilinear;
    c.resampling_rule = coarse ? "default for a continuous covariate on a target much coarser than its pixels: values "
                                 "are averaged rather than sampled"
                               : "default for a continuous covariate";
  }
}

std::string share_text(std::int64_t part, std::int64_t total) {
  if (total <= 0 || part <= 0) return "0 %";
  const double pct = 100.0 * static_cast<double>(part) / static_cast<double>(total);
  if (pct < 0.1) return "< 0.1 %";
  return significant(pct, 3) + " %";
}

double share(std::int64_t part, std::int64_t total) {
  return total > 0 ? static_cast<double>(part) / static_cast<double>(total) : 0.0;
}

std::string resolution_text(const RasterGrid& grid) {
  if (!grid.has_geotransform) return "no georeferencing";
  const auto& gt = grid.geotransform;
  std::string units = grid.linear_units.empty() ? (grid.crs_wkt.empty() ? "map units" : "CRS units") : grid.linear_units;
  if (grid.linear_units.empty() && !grid.crs_wkt.empty()) {
    OGRSpatialReference srs;
    if (srs.importFromWkt(grid.crs_wkt.c_str()) == OGRERR_NONE && srs.IsGeographic()) units = "degree";
  }
  return significant(std::hypot(gt[1], gt[4]), 8) + " x " + significant(std::hypot(gt[2], gt[5]), 8) + " " + units;
}

}  // namespace

bool AlignmentPlan::any_warped() const {
  return std::any_of(covariates.begin(), covariates.end(), [](const AlignedCovariate& c) { return c.warped; });
}

std::string grid_summary(const RasterGrid& grid) {
  return std::to_string(grid.width) + " x " + std::to_string(grid.height) + " pixels, " + resolution_text(grid) + ", " +
         crs_name(grid);
}

AlignmentPlan plan_alignment(const std::vector<AlignmentInput>& inputs, const AlignmentOptions& options) {
  ensure_gdal();
  if (inputs.empty()) throw UsageError("no covariates to align");
  for (const auto& [name, method] : options.resampling) {
    (void)method;
    if (std::none_of(inputs.begin(), inputs.end(), [&](const AlignmentInput& in) { return in.name == name; }))
      throw UsageError("--resampling " + name + "=...: no covariate of that name; the covariates are " + names_of(inputs));
  }
  for (const AlignmentInput& in : inputs) {
    // Refused whether or not this run needs to resample it: the request itself makes no sense.
    const auto it = options.resampling.find(in.name);
    if (in.categorical && it != options.resampling.end() && mixes_values(it->second))
      throw UsageError("--resampling " + in.name + "=" + to_string(it->second) + ": \"" + in.name +
                       "\" is categorical, so its class codes cannot be interpolated or averaged (the mean of two "
                       "codes is no class); use nearest or mode");
  }
  if (!(options.error_threshold >= 0.0)) throw UsageError("the warp error threshold must be 0 or more pixels");
  std::vector<RasterGrid> grids;
  for (const AlignmentInput& in : inputs) grids.push_back(read_grid(in.path, in.band));
  const Target target = choose_target(inputs, grids, options.target);
  check_target(target);

  AlignmentPlan plan;
  plan.target = target.grid;
  plan.target_rule = target.rule;
  plan.error_threshold = options.error_threshold;
  const Extent target_extent = extent_of(target.grid);
  for (std::size_t i = 0; i < inputs.size(); ++i) {
    AlignedCovariate c;
    c.input = inputs[i];
    c.source = grids[i];
    c.warped = !on_same_grid(target.path.empty() ? "the stated target grid" : target.path, target.grid, inputs[i].path,
                             grids[i]);
    if (!c.warped) {
      c.extent_in_target = target_extent;
      plan.covariates.push_back(c);
      continue;
    }
    if (!c.source.has_geotransform)
      throw InputError("covariate " + c.input.name + " (" + c.input.path + ") is not on the target grid (" + target.rule +
                       ") and has no georeferencing, so it cannot be placed on it: georeference it or give the "
                       "target grid it is on.");
    check_crs_pair(c, target.grid, target.rule);
    c.extent_in_target = extent_in_target(c, target.grid);
    const Extent& e = c.extent_in_target;
    const bool overlaps = e[0] < target_extent[2] && e[2] > target_extent[0] && e[1] < target_extent[3] &&
                          e[3] > target_extent[1];
    if (!overlaps)
      throw InputError("covariate " + c.input.name + " (" + c.input.path + ") does not cover the target grid at all: its "
                       "extent is " + extent_text(extent_of(c.source)) + " in its CRS (" + crs_name(c.source) + "), " +
                       extent_text(e) + " in the target CRS, but the target grid (" + target.rule + ") covers " +
                       extent_text(target_extent) + " (" + crs_name(target.grid) +
                       "). Give a raster of the same area, or a target grid inside its extent.");
    c.partial = e[0] > target_extent[0] || e[1] > target_extent[1] || e[2] < target_extent[2] || e[3] < target_extent[3];
    c.pixel_ratio = pixel_ratio(c, target.grid);
    choose_resampling(c, options);
    plan.covariates.push_back(c);
  }
  return plan;
}

std::unique_ptr<CovariateSource> open_covariate_source(const AlignmentPlan& plan, std::size_t index, int decode_threads) {
  const AlignedCovariate& c = plan.covariates.at(index);
  if (!c.warped) return std::make_unique<DirectCovariateSource>(c.input.path, c.input.band, plan.target, decode_threads);
  return std::make_unique<WarpedCovariateSource>(c.input.path, c.input.band, plan.target, c.resampling,
                                                 plan.error_threshold, c.pixel_ratio);
}

std::vector<std::string> alignment_warnings(const AlignmentPlan& plan, const std::vector<std::int64_t>& missing,
                                            std::int64_t total) {
  std::vector<std::string> warnings;
  for (const AlignedCovariate& c : plan.covariates) {
    if (c.warped && c.pixel_ratio > 0.0 && c.pixel_ratio <= 1.0 / kCoarseningRatio)
      warnings.push_back("covariate " + c.input.name + " (" + c.input.path + ") has pixels about " +
                         significant(1.0 / c.pixel_ratio, 2) + " times as wide as the target grid's and was " +
                         to_string(c.resampling) + "-resampled onto it: that adds no detail, so along " + c.input.name +
                         "'s gradients the map is no sharper than its " + resolution_text(c.source) + " pixels.");
  }
  for (std::size_t i = 0; i < plan.covariates.size(); ++i) {
    const AlignedCovariate& c = plan.covariates[i];
    if (!c.partial) continue;
    const std::int64_t m = i < missing.size() ? missing[i] : 0;
    warnings.push_back("covariate " + c.input.name + " (" + c.input.path + ") covers only part of the target grid: its "
                       "extent in the target CRS is " + extent_text(c.extent_in_target) + ", the target's " +
                       extent_text(extent_of(plan.target)) + "; " + share_text(m, total) +
                       " of target pixels have no value from it (outside its extent or nodata) and are nodata in "
                       "every output.");
  }
  return warnings;
}

nlohmann::ordered_json alignment_json(const AlignmentPlan& plan, const std::vector<std::int64_t>& missing,
                                      std::int64_t total) {
  using json = nlohmann::ordered_json;
  const RasterGrid& t = plan.target;
  json target{{"rule", plan.target_rule},
              {"width", t.width},
              {"height", t.height},
              {"crs", t.crs_name},
              {"resolution", resolution_text(t)},
              {"geotransform", t.geotransform}};
  json covariates = json::array();
  for (std::size_t i = 0; i < plan.covariates.size(); ++i) {
    const AlignedCovariate& c = plan.covariates[i];
    const std::int64_t m = i < missing.size() ? missing[i] : 0;
    json entry{{"covariate", c.input.name},
               {"source", c.input.path},
               {"band", c.input.band},
               {"grid", {{"width", c.source.width}, {"height", c.source.height}, {"geotransform", c.source.geotransform}}},
               {"crs", c.source.crs_name},
               {"resolution", resolution_text(c.source)},
               {"aligned_by", c.warped ? "GDAL warper, window by window" : "none: already on the target grid"}};
    if (c.warped) {
      entry["resampling"] = to_string(c.resampling);
      entry["resampling_rule"] = c.resampling_rule;
      entry["pixel_ratio"] = c.pixel_ratio;
      entry["coverage"] = c.partial ? "partial" : "full";
    } else {
      entry["resampling"] = nullptr;
    }
    entry["pixels_without_value"] = m;
    entry["share_without_value"] = share(m, total);
    covariates.push_back(entry);
  }
  return json{{"target_grid", target},
              {"nodata_rule",
               "GDAL's warper: a target pixel takes its value from the valid source pixels under its kernel or "
               "footprint (weights renormalised over them); it is nodata only when none is valid or it lies outside "
               "the source"},
              {"approximation_error_pixels", plan.error_threshold},
              {"covariates", covariates}};
}

std::vector<std::pair<std::string, std::string>> alignment_metadata(const AlignmentPlan& plan,
                                                                    const std::vector<std::int64_t>& missing,
                                                                    std::int64_t total) {
  std::vector<std::pair<std::string, std::string>> items;
  items.emplace_back("HABCAST_TARGET_GRID", plan.target_rule + "; " + grid_summary(plan.target));
  for (std::size_t i = 0; i < plan.covariates.size(); ++i) {
    const AlignedCovariate& c = plan.covariates[i];
    std::string key = "HABCAST_COVARIATE_";
    for (char ch : c.input.name) key += static_cast<char>(std::toupper(static_cast<unsigned char>(ch)));
    const std::int64_t m = i < missing.size() ? missing[i] : 0;
    std::string value = "source " + c.input.path + " band " + std::to_string(c.input.band) + "; grid " +
                        grid_summary(c.source) + "; ";
    value += c.warped ? "resampling " + std::string(to_string(c.resampling)) + " (" + c.resampling_rule + ")"
                      : std::string("already on the target grid, not resampled");
    value += "; " + share_text(m, total) + " of target pixels without a value";
    items.emplace_back(key, value);
  }
  return items;
}

}  // namespace habcast
