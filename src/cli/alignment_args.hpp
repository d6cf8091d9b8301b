#pragma once
// The command-line options that choose the target grid and override resampling, shared by
// predict, fit and evaluate (batch takes --grid-of and --resampling only: its tiles each have
// their own grid).
#include <CLI/CLI.hpp>
#include <string>
#include <vector>

#include "raster/alignment_plan.hpp"

namespace habcast::cli {

struct AlignmentArgs {
  std::string grid_of;
  std::string grid_like;
  std::string grid_crs;
  std::string grid_resolution;
  std::string grid_bounds;
  std::vector<std::string> resampling;
  double warp_error = 0.0;
};

/// Adds --grid-of and --resampling; with `stated_grids` also --grid-like, --grid-crs,
/// --grid-resolution and --grid-bounds.
void add_alignment_options(CLI::App& command, AlignmentArgs& args, bool stated_grids = true);

/// The options as the raster layer takes them. Throws UsageError for malformed values.
AlignmentOptions alignment_options(const AlignmentArgs& args);

/// Help text on alignment for a command's footer.
extern const char* const kAlignmentHelp;

}  // namespace habcast::cli
