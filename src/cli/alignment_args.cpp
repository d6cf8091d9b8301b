#include "cli/alignment_args.hpp"

#include <cmath>
#include <cstdlib>

#include "core/base/error.hpp"

namespace habcast::cli {

namespace {

std::vector<double> numbers(const std::string& text, const char* option, std::size_t low, std::size_t high) {
  std::vector<double> values;
  std::size_t start = 0;
  while (start <= text.size()) {
    const std::size_t comma = text.find(',', start);
    const std::string item = text.substr(start, comma == std::string::npos ? std::string::npos : comma - start);
    char* end = nullptr;
    const double v = std::strtod(item.c_str(), &end);
    if (item.empty() || end == nullptr || *end != '\0' || !std::isfinite(v))
      throw UsageError(std::string(option) + " expects numbers separated by commas, got \"" + text + "\"");
    values.push_back(v);
    if (comma == std::string::npos) break;
    start = comma + 1;
  }
  if (values.size() < low || values.size() > high)
    throw UsageError(std::string(option) + " expects " + (low == high ? std::to_string(low) : std::to_string(low) + " or " + std::to_string(high)) +
                     " numbers, got \"" + text + "\"");
  return values;
}

}  // namespace

const char* const kAlignmentHelp =
    "Covariates on different grids: covariates not on the target grid (another CRS, resolution, origin or\n"
    "extent) are warped onto it window by window by GDAL, with no intermediate files. The target grid is\n"
    "the first covariate's unless --grid-of, --grid-like or --grid-crs/--grid-resolution/--grid-bounds say\n"
    "otherwise. Resampling: a covariate's `resampling` key in the model file or --resampling NAME=METHOD;\n"
    "by default bilinear, average where the target pixel is 2 or more source pixels across, nearest for\n"
    "categorical covariates (mode when coarsening). The report lists, per covariate, its grid, the method\n"
    "used and the share of target pixels it left without a value; see docs/alignment.md.\n"
    "  habcast predict model.toml -o out/ -c tmin=/vsizip/climate.zip/tmin.tif -c slope=slope_30m.tif \\\n"
    "      --grid-of slope --resampling tmin=cubic";

void add_alignment_options(CLI::App& command, AlignmentArgs& args, bool stated_grids) {
  command.add_option("--grid-of", args.grid_of,
                     "NAME: work on the grid of this covariate's raster (default: the first covariate's)");
  if (stated_grids) {
    command.add_option("--grid-like", args.grid_like, "FILE: work on the grid of this raster (size, georeferencing, CRS)");
    command.add_option("--grid-crs", args.grid_crs, "CRS of a stated target grid (EPSG:32630, WKT, ...); with\n"
                                                    "--grid-resolution and --grid-bounds");
    command.add_option("--grid-resolution", args.grid_resolution, "X or X,Y: pixel size of the stated grid, in its CRS units");
    command.add_option("--grid-bounds", args.grid_bounds,
                       "XMIN,YMIN,XMAX,YMAX of the stated grid, in its CRS units (a whole number of pixels)");
  }
  command.add_option("--warp-error", args.warp_error,
                     "PIXELS: let GDAL approximate the reprojection to within this many source pixels\n"
                     "(gdalwarp's -et, whose default is 0.125); faster, but values then depend slightly on\n"
                     "the windows. Default 0: every pixel transformed exactly")
      ->check(CLI::Range(0.0, 10.0));
  command.add_option("--resampling", args.resampling,
                     "NAME=METHOD: how covariate NAME reaches the target grid, overriding the model file\n"
                     "(nearest, bilinear, cubic, average, mode; categorical: nearest or mode); repeatable");
}

AlignmentOptions alignment_options(const AlignmentArgs& args) {
  AlignmentOptions o;
  o.target.covariate = args.grid_of;
  o.target.template_path = args.grid_like;
  o.target.crs = args.grid_crs;
  o.error_threshold = args.warp_error;
  if (!args.grid_resolution.empty()) o.target.resolution = numbers(args.grid_resolution, "--grid-resolution", 1, 2);
  if (!args.grid_bounds.empty()) o.target.bounds = numbers(args.grid_bounds, "--grid-bounds", 4, 4);
  for (const std::string& item : args.resampling) {
    const auto eq = item.find('=');
    if (eq == std::string::npos || eq == 0 || eq + 1 == item.size())
      throw UsageError("--resampling expects NAME=METHOD (for example --resampling tmin=cubic), got \"" + item + "\"");
    const std::string name = item.substr(0, eq);
    const auto method = parse_resampling(item.substr(eq + 1));
    if (!method)
      throw UsageError("--resampling " + item + ": the method must be one of " + resampling_names());
    if (!o.resampling.emplace(name, *method).second) throw UsageError("--resampling " + name + "=... is given twice");
  }
  return o;
}

}  // namespace habcast::cli
