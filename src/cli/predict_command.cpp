// `habcast predict`: options -> PredictOptions -> run_predict -> summary on stdout.
#include <unistd.h>

#include <iostream>
#include <memory>

#include "cli/alignment_args.hpp"
#include "cli/commands.hpp"
#include "cli/predict_model_set.hpp"
#include "cli/predict_scenarios.hpp"
#include "core/base/error.hpp"
#include "pipeline/stop_signal.hpp"
#include "predict/predict_run.hpp"
#include "predict/prediction_report.hpp"

namespace habcast::cli {

namespace {

constexpr const char* kPredictHelp =
    "Apply a fitted model to covariate rasters and write, into the output folder:\n"
    "  suitability.tif    Float32, the prediction on the response scale (probability, count, ...)\n"
    "  uncertainty.tif    Float32, 3 bands: standard error, lower and upper confidence limit\n"
    "                     (delta method from the model's covariance; limits formed on the link scale)\n"
    "  extrapolation.tif  UInt8 flags, summed: 1 = a covariate outside its training range,\n"
    "                     2 = in range but outside the training hull, 4 = a category not seen in\n"
    "                     training, 8 = in range but NT2 > threshold, 16 = in range but outside the\n"
    "                     2-D hull of two covariates that share a term; 255 = no data (legend included)\n"
    "  novelty.tif        Float32, 3 bands: MESS similarity (%), NT1, NT2 (D^2 / max D^2)\n"
    "  least_similar.tif  UInt8, the covariate with the lowest similarity (attribute table names it)\n"
    "  report.json        counts, shares and areas per cause and covariate, warnings, timing\n"
    "  units.gpkg, units.csv, units.json  with --units: per unit (reserve, parcel, ...) its area,\n"
    "                     mean suitability with a delta-method standard error and interval, expected\n"
    "                     occupied area (binomial), area above --units-threshold, share extrapolated\n"
    "                     per cause; pixels weighted by the exact share of their area inside the unit\n"
    "Joint checks run on the model values (after transform and standardisation) of the continuous\n"
    "covariates the model uses; see docs/extrapolation-flags.md.\n"
    "A pixel where any covariate is nodata is nodata in every output. Outputs appear only when complete; an interrupted run\n"
    "leaves nothing behind.\n\n"
    "Example:\n"
    "  habcast predict sample-rasters/demo-model.toml -o out/\n"
    "  habcast predict model.toml -c tmin=tmin_2050.tif -c precip=precip_2050.tif -o out-2050/ \\\n"
    "      --max-extrapolated 10 --co COMPRESS=ZSTD --overviews\n"
    "  habcast predict model.toml -o out/ --units reserves.gpkg --units-id name --units-threshold 0.5\n\n"
    "Exit codes: 0 ok, 2 usage, 3 bad input, 4 read/write failure,\n"
    "            5 outputs written but more extrapolation than --max-extrapolated, 130/143 interrupted.";

struct PredictArgs {
  PredictOptions options;
  std::vector<std::string> covariates;
  std::string log_format = "text";
  bool quiet = false;
  double max_extrapolated = -1.0;
  long long max_memory_mib = 2048;
  std::vector<std::string> checks{"range", "hull", "pairs", "nt2", "mess"};
  bool no_novelty_rasters = false;
  ScenarioArgs scenarios;
  std::vector<std::string> models;  ///< one model, or a model set
  ModelSetArgs model_set;
  AlignmentArgs alignment;
};

void apply_checks(PredictArgs& args) {
  NoveltyOptions& n = args.options.novelty;
  n.hull = n.pairs = n.nt2 = n.mess = false;
  for (const std::string& c : args.checks) {
    if (c == "hull") n.hull = true;
    else if (c == "pairs") n.pairs = true;
    else if (c == "nt2") n.nt2 = true;
    else if (c == "mess") n.mess = true;
  }
  args.options.novelty_rasters = !args.no_novelty_rasters;
}

void parse_covariate_args(PredictArgs& args) {
  for (const std::string& item : args.covariates) {
    const auto eq = item.find('=');
    if (eq == std::string::npos || eq == 0 || eq + 1 == item.size())
      throw UsageError("-c expects NAME=FILE (for example -c tmin=tmin.tif), got \"" + item + "\"");
    const std::string name = item.substr(0, eq);
    if (!args.options.covariate_rasters.emplace(name, item.substr(eq + 1)).second)
      throw UsageError("-c " + name + "=... is given twice");
  }
}

int run_predict_command(PredictArgs& args, std::ostream& out, std::ostream& err) {
  parse_covariate_args(args);
  apply_checks(args);
  args.options.alignment = alignment_options(args.alignment);
  if (args.max_extrapolated >= 0.0) args.options.max_extrapolated_percent = args.max_extrapolated;
  args.options.max_memory_bytes = args.max_memory_mib << 20;
  if (args.log_format == "json") args.options.progress = ProgressStyle::json;
  else if (args.quiet) args.options.progress = ProgressStyle::quiet;
  const bool terminal = &err == &std::cerr && isatty(STDERR_FILENO) != 0;
  std::unique_ptr<Progress> progress = make_progress(args.options.progress, err, terminal);

  StopSignalGuard guard;
  args.options.model_path = args.models.front();
  if (args.models.size() > 1)
    return run_predict_model_set(args.options, args.models, args.model_set, args.scenarios, *progress,
                                 args.log_format == "json", args.quiet, out);
  if (!args.model_set.weights.empty()) throw UsageError("--weights weighs the models of a set: give two or more model files");
  if (args.scenarios.any())
    return run_predict_scenarios(args.options, args.scenarios, *progress, args.log_format == "json", args.quiet, out);
  if (args.scenarios.threshold || !args.scenarios.threshold_from.empty()) throw UsageError("--threshold classifies a change: it needs --scenarios or --scenario");
  const PredictSummary summary = run_predict(args.options, *progress, HABCAST_VERSION);
  for (const std::string& w : summary.warnings) progress->message("warning", w);

  if (args.log_format == "json") {
    out << summary.report.dump() << "\n";
  } else if (!args.quiet) {
    const auto& px = summary.report["pixels"];
    out << "Predicted " << px["predicted"].get<long long>() << " of " << px["total"].get<long long>() << " pixels";
    if (summary.report.contains("response"))
      out << "; response mean " << format_value(summary.report["response"]["mean"].get<double>()) << ", range "
          << format_value(summary.report["response"]["min"].get<double>()) << " to "
          << format_value(summary.report["response"]["max"].get<double>());
    out << ".\n";
    if (!summary.report["extrapolation"].is_null())
      out << "Extrapolated: " << format_percent(summary.report["extrapolation"]["flagged_share"].get<double>())
          << " of valid pixels (see extrapolation.tif).\n";
    if (const auto& a = summary.report["alignment"]; a.is_object()) {
      std::string warped;
      for (const auto& c : a["covariates"])
        if (!c["resampling"].is_null())
          warped += (warped.empty() ? "" : ", ") + c["covariate"].get<std::string>() + " (" + c["resampling"].get<std::string>() + ")";
      if (!warped.empty())
        out << "Aligned onto " << a["target_grid"]["rule"].get<std::string>() << ": " << warped << ".\n";
    }
    out << "Outputs:\n";
    for (const std::string& p : summary.outputs) out << "  " << p << "\n";
  }
  return static_cast<int>(summary.exit_code);
}

}  // namespace

void register_predict(CLI::App& app, CommandRegistry& registry) {
  auto args = std::make_shared<PredictArgs>();
  CLI::App* cmd = app.add_subcommand("predict", "Map a fitted model over covariate rasters");
  cmd->footer(std::string(kPredictHelp) + kScenarioHelp + kModelSetHelp + "\n\n" + kAlignmentHelp);
  cmd->add_option("model", args->models, "Model file (TOML; see docs/model-format.md); two or more: a model set, averaged")
      ->required()
      ->check(CLI::ExistingFile);
  cmd->add_option("-c,--covariate", args->covariates,
                  "NAME=FILE: raster for a covariate (repeatable). Overrides the model file's raster;\n"
                  "covariates not given here are read from the raster the model file names");
  cmd->add_option("-o,--output", args->options.output_dir, "Output folder (created if missing)")->required();
  cmd->add_option("--level", args->options.level, "Confidence level of the limits")->default_val(0.95);
  cmd->add_option("--threads", args->options.threads, "Threads to keep busy, counting reading, model and GDAL compression (0 = all cores; 1 = one core, for a cluster slot)")->default_val(0)->check(CLI::NonNegativeNumber);
  cmd->add_option("--block-size", args->options.block_size,
                  "Edge of a processing window in pixels; memory grows with its square times threads")
      ->default_val(512);
  cmd->add_option("--co", args->options.creation_options,
                  "GDAL GeoTIFF creation option KEY=VALUE (repeatable), e.g. --co COMPRESS=ZSTD;\n"
                  "defaults: TILED=YES, 256x256 blocks, DEFLATE with predictor, BIGTIFF=IF_SAFER");
  cmd->add_option("--max-memory", args->max_memory_mib,
                  "MIB: refuse to start when windows x threads would need more working memory than this\n"
                  "(besides GDAL's cache); see docs/limits.md")
      ->default_val(2048)
      ->check(CLI::Range(16LL, 1LL << 30));
  cmd->add_flag("--overviews", args->options.overviews, "Build internal overviews for fast display");
  cmd->add_option("--quicklook", args->options.quicklook_path,
                  "FILE.png, FILE.pdf or FILE.svg (format by extension): also draw a one-page picture of\n"
                  "suitability.tif with extrapolated pixels hatched, a legend and a scale bar");
  cmd->add_option("--units", args->options.units.layer.path,
                  "POLYGONS: summarise the prediction per unit (any OGR source: GeoPackage, Shapefile,\n"
                  "GeoJSON; transformed to the grid's CRS); writes units.gpkg, units.csv, units.json.\n"
                  "See docs/units.md");
  cmd->add_option("--units-layer", args->options.units.layer.layer,
                  "LAYER of --units to read (needed when the source holds several layers)");
  cmd->add_option("--units-id", args->options.units.layer.id_field,
                  "FIELD of --units naming each unit (values must be unique). Default: the feature id");
  cmd->add_option("--units-map", args->options.units.map_path,
                  "FILE.png, FILE.pdf or FILE.svg: also draw the units coloured by their mean, hatched where\n"
                  "more than half of a unit is extrapolated, with a legend and a scale bar");
  cmd->add_option("--units-threshold", args->options.units.threshold_text,
                  "VALUE, or the JSON report of habcast evaluate (its binary map's, --threshold's or\n"
                  "max-TSS threshold, in that order): units also report the area where the prediction\n"
                  "is at least this");
  cmd->add_flag("--overwrite", args->options.overwrite, "Replace existing outputs in the output folder");
  cmd->add_option("--max-extrapolated", args->max_extrapolated,
                  "PERCENT: exit with code 5 when more than this share of valid pixels is extrapolated\n"
                  "(outputs are still written); for pipelines that must stop before management use")
      ->check(CLI::Range(0.0, 100.0));
  cmd->add_option("--max-error", args->options.max_error,
                  "E: lossy Float32 outputs, each value within E of the computed one (e.g. 1e-4 for a\n"
                  "probability): rounded to a grid of step <= 2E and stored with LERC; how much smaller\n"
                  "depends on the data's noise (on habcast's benchmark stack: 2.6x at 1e-4, 4.7x at 1e-3).\n"
                  "Default: lossless");
  cmd->add_option("--checks", args->checks,
                  "Training-domain checks, comma-separated, from: range (always on: bits 1 and 4),\n"
                  "hull (bit 2), pairs (bit 16), nt2 (bit 8, novelty band 3), mess (MESS and NT1,\n"
                  "novelty bands 1-2, least_similar.tif). Default: all")
      ->delimiter(',')
      ->check(CLI::IsMember({"range", "hull", "pairs", "nt2", "mess"}))
      ->default_str("range,hull,pairs,nt2,mess");
  cmd->add_option("--nt2-threshold", args->options.novelty.nt2_threshold,
                  "Flag bit 8 where NT2 (squared Mahalanobis distance over the farthest training\nsample's squared distance) exceeds this")
      ->default_val(1.0);
  cmd->add_option("--hull-tolerance", args->options.novelty.hull_tolerance,
                  "Relative enlargement of the hulls about their centre, absorbing roundoff on facets")
      ->default_val(1e-9);
  cmd->add_option("--hull-max-dim", args->options.novelty.hull_max_dim,
                  "Most continuous covariates for the exact full hull; above it pairwise hulls and NT2\n"
                  "stand in (Qhull's facets grow like n^(d/2): ~23,000 for 2,000 samples in 6-D)")
      ->default_val(6);
  cmd->add_flag("--no-novelty-rasters", args->no_novelty_rasters,
                "Do not write novelty.tif and least_similar.tif (the flags and report still use the checks)");
  cmd->add_flag("-q,--quiet", args->quiet, "No progress bar and no summary; warnings still go to stderr");
  cmd->add_option("--log-format", args->log_format,
                  "text (default) or json: JSON lines of progress and warnings on stderr, report on stdout")
      ->check(CLI::IsMember({"text", "json"}));
  cmd->add_option("--scenarios", args->scenarios.file, "FILE.toml: named scenarios, each replacing some covariates' rasters (docs/scenarios.md)")
      ->check(CLI::ExistingFile);
  cmd->add_option("--scenario", args->scenarios.inline_args,
                  "NAME:COVARIATE=FILE: a scenario on the command line (repeatable; same NAME adds a covariate)");
  cmd->add_option("--threshold", args->scenarios.threshold,
                  "T: with scenarios, classify each pixel's change at suitability T (gain, loss, stable, not\n"
                  "distinguishable) into change_class.tif");
  cmd->add_option("--threshold-from", args->scenarios.threshold_from,
                  "FILE: with scenarios, the threshold habcast evaluate recorded (its --json output, or the\n"
                  "binary map of --write-binary)")
      ->check(CLI::ExistingFile);
  cmd->add_option("--change-quicklook", args->scenarios.change_quicklook,
                  "png, svg or pdf: with scenarios and a threshold, draw change_class.EXT in each scenario's folder")
      ->check(CLI::IsMember({"png", "svg", "pdf"}));
  cmd->add_option("--weights", args->model_set.weights,
                  "W1,W2,...: weights of a model set's models, in order (normalised); default: Akaike weights")
      ->delimiter(',');
  cmd->add_option("--average-se", args->model_set.se_form,
                  "Unconditional SE of a model set: revised (default), sqrt(sum w (se^2 + d^2)), or 2002,\n"
                  "sum w sqrt(se^2 + d^2), with d the model's departure from the average (Burnham & Anderson 2002)")
      ->check(CLI::IsMember({"revised", "2002"}));
  add_alignment_options(*cmd, args->alignment);
  registry.add(cmd, [args](std::ostream& out, std::ostream& err) { return run_predict_command(*args, out, err); });
}

}  // namespace habcast::cli
