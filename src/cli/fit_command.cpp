// `habcast fit`: options -> FitOptions -> run_fit -> coefficient table on stdout.
#include <cmath>
#include <iostream>
#include <limits>
#include <memory>

#include "cli/alignment_args.hpp"
#include "cli/commands.hpp"
#include "core/base/error.hpp"
#include "fit/fit_run.hpp"

namespace habcast::cli {

namespace {

constexpr const char* kFitHelp =
    "Fit a GLM to field points and covariate rasters, and write a model file that `habcast predict`\n"
    "reads as it is, with the training samples table beside it (MODEL-training.csv).\n\n"
    "How it works:\n"
    "  1. Points are read from a CSV with coordinate columns (--x, --y) or from any OGR point layer\n"
    "     (GeoPackage, Shapefile, GeoJSON). Their CRS is --crs, else the layer's own, else EPSG:4326\n"
    "     with longitude in x and latitude in y. PROJ moves them into the rasters' CRS.\n"
    "  2. Each covariate is read at the pixel containing the point (--bilinear interpolates continuous\n"
    "     ones). Points outside the grid or on nodata are dropped and counted; points sharing a pixel\n"
    "     are reported.\n"
    "  3. Continuous covariates are standardised (mean 0, sd 1 at the points) unless --no-standardise;\n"
    "     the centre and scale go into the model file, so predict applies them to the rasters.\n"
    "  4. The model is fitted by iteratively reweighted least squares with R's glm() defaults: it stops\n"
    "     when |dev - dev_old| / (|dev| + 0.1) < 1e-8 (at most --max-iterations, default 25), and\n"
    "     standard errors use the last iteration's weights, as vcov() does. --tight fits to 1e-10 and\n"
    "     takes the standard errors at the estimate itself. Aliased terms, separated data and\n"
    "     non-convergence stop the fit with a message saying what to change.\n\n"
    "A raster with a category table or attribute table must be declared --categorical (or\n"
    "--continuous if its values are measurements). Classes of a categorical raster without training\n"
    "points are named: predict gives their pixels no prediction.\n\n"
    "Formula: terms joined by '+', in the usual notation: x, x^2, a:b, log(x), I(x^2); a categorical\n"
    "covariate (--categorical) adds one indicator per class other than its reference class; \"- 1\"\n"
    "drops the intercept. \"presence ~ ...\" names the response column. Splines: ns(x, df = 4) and\n"
    "bs(x, df = 5, degree = 2) put their knots where R's ns()/bs() would (quantiles of the points'\n"
    "values); give them with knots = [..] and boundary = [lo, hi] in raw units.\n\n"
    "Examples:\n"
    "  habcast fit sample-rasters/training.csv --crs EPSG:32630 \\\n"
    "      -c tmin=sample-rasters/tmin.tif -c precip=sample-rasters/precip.tif \\\n"
    "      -c slope=sample-rasters/slope.tif -c landcover=sample-rasters/landcover.tif --categorical landcover \\\n"
    "      --formula \"presence ~ tmin + tmin^2 + precip + precip^2 + tmin:precip + slope + landcover\" \\\n"
    "      -o out/moth.toml\n"
    "  habcast fit counts.gpkg --layer plots --family poisson --offset \"log(effort)\" --prediction-offset 0 \\\n"
    "      -c tmin=tmin.tif --formula \"count ~ tmin + tmin^2\" -o counts.toml\n"
    "  habcast fit sites.csv -c tmin=tmin.tif -c precip=precip.tif -o smooth.toml \\\n"
    "      --formula \"presence ~ ns(tmin, df = 4) + ns(tmin, df = 4):precip + precip\"\n\n"
    "Exit codes: 0 ok, 2 usage, 3 bad input (points, rasters, a model that cannot be fitted, class codes\n"
    "not declared categorical, projected coordinates read as longitude/latitude), 4 I/O.";

struct FitArgs {
  FitOptions options;
  std::vector<std::string> covariates;
  std::vector<std::string> categorical;
  std::vector<std::string> continuous;
  bool tight = false;
  bool json = false;
  int max_iterations = 0;  ///< 0: the convention's own limit
  std::vector<std::string> transforms;
  std::vector<std::string> references;
  std::string family = "binomial";
  std::string link;
  double prediction_offset = std::numeric_limits<double>::quiet_NaN();
  AlignmentArgs alignment;
};

std::pair<std::string, std::string> split_pair(const std::string& item, const std::string& option, const std::string& example) {
  const auto eq = item.find('=');
  if (eq == std::string::npos || eq == 0 || eq + 1 == item.size())
    throw UsageError(option + " expects NAME=VALUE (for example " + option + " " + example + "), got \"" + item + "\"");
  return {item.substr(0, eq), item.substr(eq + 1)};
}

Family family_of(const std::string& s) {
  if (s == "binomial") return Family::binomial;
  if (s == "poisson") return Family::poisson;
  return Family::gaussian;
}

Link link_of(const std::string& s) {
  if (s == "logit") return Link::logit;
  if (s == "probit") return Link::probit;
  if (s == "cloglog") return Link::cloglog;
  if (s == "log") return Link::log;
  return Link::identity;
}

Transform transform_of(const std::string& s, const std::string& item) {
  if (s == "log") return Transform::log;
  if (s == "log1p") return Transform::log1p;
  if (s == "sqrt") return Transform::sqrt;
  if (s == "none") return Transform::none;
  throw UsageError("--transform " + item + ": use log, log1p, sqrt or none");
}

int run_fit_command(FitArgs& args, std::ostream& out, std::ostream& err) {
  FitOptions& o = args.options;
  for (const std::string& item : args.covariates) {
    const auto [name, path] = split_pair(item, "-c", "tmin=tmin.tif");
    if (!o.covariate_rasters.emplace(name, path).second) throw UsageError("-c " + name + "=... is given twice");
  }
  for (const std::string& name : args.categorical) o.categorical.insert(name);
  for (const std::string& name : args.continuous) o.continuous.insert(name);
  if (args.tight) o.irls = IrlsOptions::tight();
  if (args.max_iterations > 0) o.irls.max_iterations = args.max_iterations;
  for (const std::string& item : args.transforms) {
    const auto [name, t] = split_pair(item, "--transform", "precip=log");
    o.transforms[name] = transform_of(t, item);
  }
  for (const std::string& item : args.references) {
    const auto [name, level] = split_pair(item, "--reference", "landcover=heath");
    o.reference_levels[name] = level;
  }
  o.family = family_of(args.family);
  if (!args.link.empty()) {
    o.link = link_of(args.link);
    const bool fits = (o.family == Family::binomial && (*o.link == Link::logit || *o.link == Link::probit || *o.link == Link::cloglog)) ||
                      (o.family == Family::poisson && (*o.link == Link::log || *o.link == Link::identity)) ||
                      (o.family == Family::gaussian && (*o.link == Link::identity || *o.link == Link::log));
    if (!fits)
      throw UsageError("--link " + args.link + " does not fit --family " + args.family +
                       "; binomial takes logit, probit or cloglog; poisson log or identity; gaussian identity or log");
  }
  if (!std::isnan(args.prediction_offset)) o.prediction_offset = args.prediction_offset;
  if (o.prediction_offset && o.offset.empty()) throw UsageError("--prediction-offset needs --offset");

  o.alignment = alignment_options(args.alignment);
  const FitSummary summary = run_fit(o, HABCAST_VERSION);
  if (args.json) out << fit_report_json(summary).dump(2) << "\n";
  else out << format_fit_summary(summary);
  for (const std::string& w : summary.warnings) err << "habcast: warning: " << w << "\n";
  return 0;
}

}  // namespace

void register_fit(CLI::App& app, CommandRegistry& registry) {
  auto args = std::make_shared<FitArgs>();
  FitOptions& o = args->options;
  CLI::App* cmd = app.add_subcommand("fit", "Fit a GLM to field points and covariate rasters; write a model file");
  cmd->footer(kFitHelp);
  cmd->add_option("points", o.points.path, "Points: CSV with coordinate columns, or an OGR point source")
      ->required()
      ->check(CLI::ExistingFile);
  cmd->add_option("-c,--covariate", args->covariates, "NAME=FILE: raster of a covariate the formula uses (repeatable)")
      ->required();
  cmd->add_option("-f,--formula", o.formula, "Model terms, e.g. \"presence ~ tmin + tmin^2 + precip + tmin:precip + soil\"")
      ->required();
  cmd->add_option("-o,--output", o.model_path, "Model file to write (TOML)")->required();
  cmd->add_option("--samples", o.samples_path, "Training samples CSV to write (default: MODEL-training.csv beside it)");
  cmd->add_option("--response", o.response, "Response column (0/1 presence-absence, counts, ...), if not in the formula");
  cmd->add_option("--family", args->family, "binomial (0/1), poisson (counts) or gaussian")
      ->check(CLI::IsMember({"binomial", "poisson", "gaussian"}))
      ->default_val("binomial");
  cmd->add_option("--link", args->link, "logit, probit, cloglog, log or identity (default: the family's usual link)")
      ->check(CLI::IsMember({"logit", "probit", "cloglog", "log", "identity"}));
  cmd->add_option("--categorical", args->categorical, "NAME: a covariate whose raster holds class codes (repeatable)");
  cmd->add_option("--continuous", args->continuous,
                  "NAME: fit this covariate as a number although its raster has a category table (repeatable)");
  cmd->add_option("--reference", args->references, "NAME=LEVEL: reference class of a categorical covariate (default: lowest code)");
  cmd->add_option("--transform", args->transforms, "NAME=log|log1p|sqrt: transform a covariate before standardising");
  cmd->add_flag("--standardise,!--no-standardise", o.standardise,
                "Centre and scale continuous covariates (default on; recorded in the model file)");
  cmd->add_flag("--bilinear", o.bilinear, "Interpolate continuous covariates between the 4 nearest pixel centres");
  cmd->add_option("--crs", o.points_crs, "CRS of the point coordinates: EPSG:4326 (default for CSV), EPSG:32630, WKT ...");
  cmd->add_option("--x", o.points.x_column, "CSV column of the x coordinate (longitude or easting)")->default_val("x");
  cmd->add_option("--y", o.points.y_column, "CSV column of the y coordinate (latitude or northing)")->default_val("y");
  cmd->add_option("--layer", o.points.layer, "Layer of a multi-layer vector source (default: the first)");
  cmd->add_option("--weights", o.weights_column, "Column of prior weights (positive; e.g. trials for proportions)");
  cmd->add_option("--offset", o.offset, "COLUMN or log(COLUMN): offset on the link scale, e.g. log(effort)");
  cmd->add_option("--prediction-offset", args->prediction_offset,
                  "Offset written to the model for predict (link scale), e.g. log of a standard effort");
  cmd->add_option("--name", o.name, "Model name recorded in the file and in outputs' metadata");
  cmd->add_option("--max-iterations", args->max_iterations, "IRLS iteration limit (default 25 as R's glm(), 50 with --tight)")
      ->check(CLI::Range(1, 10000));
  cmd->add_flag("--tight", args->tight,
                "Fit to a relative deviance change of 1e-10 (R's default: 1e-8) and take standard errors at the estimate");
  cmd->add_flag("--json", args->json, "Print the report as JSON, listing every point not used and why");
  cmd->add_flag("--overwrite", o.overwrite, "Replace an existing model file and samples table");
  add_alignment_options(*cmd, args->alignment);
  registry.add(cmd, [args](std::ostream& out, std::ostream& err) { return run_fit_command(*args, out, err); });
}

}  // namespace habcast::cli
