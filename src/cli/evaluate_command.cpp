// `habcast evaluate`: options -> EvaluateOptions -> run_evaluate -> metrics on stdout.
#include <cmath>
#include <iostream>
#include <limits>
#include <memory>

#include "cli/alignment_args.hpp"
#include "cli/commands.hpp"
#include "core/base/error.hpp"
#include "evaluate/evaluate_run.hpp"
#include "pipeline/stop_signal.hpp"

namespace habcast::cli {

namespace {

constexpr const char* kEvaluateHelp =
    "Measure how well a map predicts independent field points (not the points the model was fitted\n"
    "on: those flatter it).\n\n"
    "Predictions come from a raster (--prediction, e.g. predict's suitability.tif) or from a model\n"
    "file applied to its covariate rasters at the points (--model, with -c NAME=FILE to swap one).\n"
    "Points are a CSV with coordinate columns or an OGR point layer, moved into the raster's CRS\n"
    "(--crs; default the layer's own, else EPSG:4326 with longitude in x).\n\n"
    "Presence-absence (--response COLUMN with 0/1):\n"
    "  AUC    chance that a random presence scores above a random absence (0.5 = no skill), with its\n"
    "         standard error (Hanley & McNeil 1982) and a normal 95% interval, clipped to [0, 1]\n"
    "  TSS    sensitivity + specificity - 1 at the threshold that maximises it (and at --threshold)\n"
    "  calibration  observed share of presences against the mean prediction in --bins bins\n"
    "Presence-only (--presence-only): every point is a presence; --background points are drawn\n"
    "  uniformly from the grid's pixels by SplitMix64 from --seed (same seed, same points on every\n"
    "  machine; draws on nodata are skipped; --write-background saves them). AUC then compares\n"
    "  presences with background, and the continuous Boyce index (Hirzel et al. 2006) says whether\n"
    "  presences fall more often than expected where predictions are high (-1 to 1).\n\n"
    "Outputs: a text summary (or --json), --plot FILE.pdf (or .svg, .png; --svg is the same option)\n"
    "with the ROC curve and the calibration or Boyce curve, --write-binary FILE.tif with 1 where\n"
    "the prediction reaches the threshold (--threshold, strictly between 0 and 1 for probabilities;\n"
    "else the TSS-maximising one; the rule is stored in the file's metadata). --json lists every\n"
    "point not used and why, and the Boyce curve.\n"
    "With --model, covariates are read at the points as the model file's [training] sampling says.\n"
    "Points in the same pixel as a training site of the model are counted and warned about.\n\n"
    "Examples:\n"
    "  habcast evaluate --prediction out/suitability.tif survey2027.csv --crs EPSG:32630 --response presence\n"
    "  habcast evaluate --model model.toml sightings.gpkg --presence-only --background 20000 --seed 7 \\\n"
    "      --plot eval.pdf --write-binary range.tif --json";

struct EvaluateArgs {
  EvaluateOptions options;
  std::vector<std::string> covariates;
  double threshold = std::numeric_limits<double>::quiet_NaN();
  bool json = false;
  AlignmentArgs alignment;
};

int run_evaluate_command(EvaluateArgs& args, std::ostream& out, std::ostream& err) {
  EvaluateOptions& o = args.options;
  for (const std::string& item : args.covariates) {
    const auto eq = item.find('=');
    if (eq == std::string::npos || eq == 0 || eq + 1 == item.size())
      throw UsageError("-c expects NAME=FILE (for example -c tmin=tmin.tif), got \"" + item + "\"");
    o.covariate_rasters[item.substr(0, eq)] = item.substr(eq + 1);
  }
  if (!o.covariate_rasters.empty() && o.model_path.empty()) throw UsageError("-c applies to --model only");
  if (!std::isnan(args.threshold)) o.threshold = args.threshold;
  o.alignment = alignment_options(args.alignment);
  StopSignalGuard guard;
  const EvaluateSummary summary = run_evaluate(o, HABCAST_VERSION);
  if (args.json) out << summary.report.dump(2) << "\n";
  else out << summary.text;
  for (const std::string& w : summary.warnings) err << "habcast: warning: " << w << "\n";
  return 0;
}

}  // namespace

void register_evaluate(CLI::App& app, CommandRegistry& registry) {
  auto args = std::make_shared<EvaluateArgs>();
  EvaluateOptions& o = args->options;
  CLI::App* cmd = app.add_subcommand("evaluate", "Measure a map against independent field points (AUC, TSS, calibration, Boyce)");
  cmd->footer(kEvaluateHelp);
  cmd->add_option("points", o.points.path, "Points: CSV with coordinate columns, or an OGR point source")
      ->required()
      ->check(CLI::ExistingFile);
  cmd->add_option("--prediction", o.prediction_path, "Prediction raster (band 1), e.g. suitability.tif")->check(CLI::ExistingFile);
  cmd->add_option("--model", o.model_path, "Model file to apply to its covariate rasters instead")->check(CLI::ExistingFile);
  cmd->add_option("-c,--covariate", args->covariates, "NAME=FILE: raster for a covariate of --model (repeatable)");
  cmd->add_option("--response", o.response, "Column of observed 0 (absent) / 1 (present)");
  cmd->add_flag("--presence-only", o.presence_only, "Points are presences; compare them with background from the grid");
  cmd->add_option("--background", o.background, "Background points to draw (presence-only)")->default_val(10000);
  cmd->add_option("--seed", o.seed, "Seed of the background draw")->default_val(1);
  cmd->add_option("--threshold", args->threshold, "Report sensitivity/specificity here; also the --write-binary threshold");
  cmd->add_option("--bins", o.bins, "Calibration bins over [0, 1]")->default_val(10)->check(CLI::Range(1, 1000));
  cmd->add_option("--boyce-width", o.boyce_width, "Boyce window width, share of the prediction range")
      ->default_val(0.1)
      ->check(CLI::Range(0.01, 1.0));
  cmd->add_option("--crs", o.points_crs, "CRS of the point coordinates (default: the file's own, else EPSG:4326)");
  cmd->add_option("--x", o.points.x_column, "CSV column of the x coordinate")->default_val("x");
  cmd->add_option("--y", o.points.y_column, "CSV column of the y coordinate")->default_val("y");
  cmd->add_option("--layer", o.points.layer, "Layer of a multi-layer vector source");
  cmd->add_option("--plot,--svg", o.svg_path,
                  "FILE.pdf, FILE.svg or FILE.png (format by extension): the ROC curve beside the\n"
                  "calibration (or Boyce) plot");
  cmd->add_option("--write-background", o.background_path,
                  "Write the background points drawn (presence-only) as CSV: draw, row, column, x, y, prediction");
  cmd->add_option("--write-binary", o.binary_path, "Write a 0/1 GeoTIFF thresholded at --threshold or the max-TSS threshold");
  cmd->add_flag("--json", args->json, "Print every number as JSON instead of text");
  cmd->add_flag("--overwrite", o.overwrite, "Replace existing --plot, --write-binary and --write-background files");
  add_alignment_options(*cmd, args->alignment);
  registry.add(cmd, [args](std::ostream& out, std::ostream& err) { return run_evaluate_command(*args, out, err); });
}

}  // namespace habcast::cli
