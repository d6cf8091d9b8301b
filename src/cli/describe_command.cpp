// `habcast describe`: options -> DescribeSettings -> describe_niche -> text or JSON, and the plot.
#include <cctype>
#include <cmath>
#include <memory>
#include <ostream>

#include "cli/commands.hpp"
#include "cli/describe_curves.hpp"
#include "cli/describe_model_set.hpp"
#include "cli/describe_report.hpp"
#include "core/base/error.hpp"
#include "core/domain/training_samples.hpp"
#include "core/model/model_file.hpp"
#include "core/model/term_plan.hpp"
#include "core/niche/niche_description.hpp"
#include "pipeline/atomic_file.hpp"
#include "pipeline/folder_lock.hpp"
#include "pipeline/output_guard.hpp"
#include "pipeline/run_files.hpp"
#include "render/figure_file.hpp"
#include "render/niche_plot.hpp"
#include "render/response_curves_figure.hpp"

namespace habcast::cli {

namespace {

constexpr const char* kDescribeHelp =
    "Show the shape of the fitted niche before mapping it. The linear predictor of the model is a\n"
    "second-order polynomial in the covariates that have squared or product terms:\n"
    "    eta(x) = c + b'x + x'Bx      (x in model units: transformed, then standardised)\n"
    "with every other covariate held fixed (continuous: training mean, or --at; categorical: the\n"
    "reference level, or --level). describe reports:\n"
    "  shape          peak, basin, saddle or ridge, from the signs of B's eigenvalues\n"
    "  optimum        the stationary point x_s = -1/2 B^-1 b in raw units, with standard errors and\n"
    "                 intervals (delta method) and whether it lies inside the training data\n"
    "  principal axes eigenvectors of B, their curvature, and the niche breadth: how far from the\n"
    "                 peak the response falls to --fraction of its peak value\n"
    "  tilt           how far the product term turns the contours off the covariate axes\n"
    "  conditional    the best value of one covariate for each value of another, as a formula\n"
    "Numbers with '+-' are standard errors; '(~0)' marks a value not distinguishable from zero.\n"
    "Formulas and references: docs/describe.md.\n\n"
    "Examples:\n"
    "  habcast describe sample-rasters/demo-model.toml\n"
    "  habcast describe model.toml --pair tmin,precip --plot niche.pdf\n"
    "  habcast describe model.toml --at slope=10 --level landcover=bog --fraction 0.25 --json\n"
    "  habcast describe model.toml --curves curves.pdf --curves curves.json\n\n"
    "Models with spline terms, term functions or powers above 2: describe finds the optimum\n"
    "numerically inside the training hull (compass search, stated in the output) and runs the\n"
    "canonical analysis only on the second-order part, saying so.";

struct DescribeArgs {
  std::string model_path;
  std::vector<std::string> models;  ///< one model, or a model set
  std::vector<double> weights;      ///< --weights of a model set
  std::string pair;
  std::vector<std::string> at;
  std::vector<std::string> levels;
  DescribeSettings settings;
  bool json = false;
  std::string plot_svg;
  std::string plot_png;
  std::vector<std::string> curves;  ///< --curves FILE: .json, or a picture (.svg, .png, .pdf)
  bool overwrite = false;
};

/// --curves FILE.json (any case) writes JSON; other extensions name a picture format.
bool is_json_path(const std::string& path) {
  if (path.size() <= 5) return false;
  std::string ext = path.substr(path.size() - 5);
  for (char& ch : ext) ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
  return ext == ".json";
}

std::pair<std::string, std::string> split_assignment(const std::string& option, const std::string& item, const char* example) {
  const auto eq = item.find('=');
  if (eq == std::string::npos || eq == 0 || eq + 1 == item.size())
    throw UsageError(option + " expects NAME=VALUE (for example " + option + " " + example + "), got \"" + item + "\"");
  return {item.substr(0, eq), item.substr(eq + 1)};
}

void translate(DescribeArgs& args) {
  const double f = args.settings.canonical.fraction;
  if (!(f > 0.0 && f < 1.0)) throw UsageError("--fraction must lie strictly between 0 and 1 (for example 0.5)");
  for (const std::string& item : args.at) {
    const auto [name, text] = split_assignment("--at", item, "slope=10");
    std::size_t used = 0;
    double value = 0.0;
    try {
      value = std::stod(text, &used);
    } catch (const std::exception&) {
      used = 0;
    }
    if (used != text.size()) throw UsageError("--at " + item + ": \"" + text + "\" is not a number");
    if (!std::isfinite(value)) throw UsageError("--at " + item + ": \"" + text + "\" is not a finite number");
    if (!args.settings.at.emplace(name, value).second) throw UsageError("--at " + name + "=... is given twice");
  }
  for (const std::string& item : args.levels) {
    const auto [name, level] = split_assignment("--level", item, "landcover=bog");
    if (!args.settings.levels.emplace(name, level).second) throw UsageError("--level " + name + "=... is given twice");
  }
  // The picture's format follows its extension; an unknown one is refused before any work.
  for (const std::string& path : args.curves) {
    const bool json = is_json_path(path);
    if (!json) figure_format(path);  // refuses an unknown extension, naming the choices
    args.settings.curves = true;
  }
  if (!args.pair.empty()) {
    const auto comma = args.pair.find(',');
    if (comma == std::string::npos || comma == 0 || comma + 1 == args.pair.size())
      throw UsageError("--pair expects two covariate names separated by a comma, for example --pair tmin,precip");
    args.settings.pair = std::pair{args.pair.substr(0, comma), args.pair.substr(comma + 1)};
  }
}

void write_plots(const DescribeArgs& args, const ModelSpec& spec, const NicheDescription& d, std::ostream& err) {
  if (args.plot_svg.empty() && args.plot_png.empty()) return;
  const OutputFolders folders({args.plot_svg, args.plot_png});
  if (!d.pair)
    throw UsageError("--plot needs two continuous covariates to draw; this model has fewer that are not held by --at");
  const Figure figure = niche_plot_figure(layout_niche_plot(spec, d, args.settings.canonical.fraction));
  for (const std::string& path : {args.plot_svg, args.plot_png}) {
    if (path.empty()) continue;
    write_file_atomically(path, encode_figure(figure, path));
    err << "habcast: wrote " << path << "\n";
  }
}

/// --curves: the response curves as JSON or as a picture, by each file's extension.
void write_curves(const DescribeArgs& args, const ModelSpec& spec, const NicheDescription& d, std::ostream& err) {
  if (args.curves.empty()) return;
  const OutputFolders folders(args.curves);
  for (const std::string& path : args.curves) {
    if (is_json_path(path))
      write_file_atomically(path, cli::curves_json(spec, d, args.settings).dump(2) + "\n");
    else
      write_file_atomically(path, encode_figure(response_curves_figure(spec, d, args.settings.canonical.confidence), path));
    err << "habcast: wrote " << path << "\n";
  }
}

int run_describe(DescribeArgs& args, std::ostream& out, std::ostream& err) {
  translate(args);
  args.model_path = args.models.front();
  if (args.models.size() > 1) {
    if (!args.plot_svg.empty() || !args.plot_png.empty())
      throw UsageError("--plot draws one model: describe the models of the set one by one to draw them");
    return run_describe_model_set(args.models, args.weights, args.settings, args.json, out);
  }
  if (!args.weights.empty()) throw UsageError("--weights weighs the models of a set: give two or more model files");
  const ModelSpec spec = read_model_file(args.model_path);
  // Before any work: the plots may not be the model, its samples or each other, nor replace an
  // existing file unless asked.
  RunFiles files;
  files.input("model file", spec.path);
  if (spec.training_samples) files.input("training samples", *spec.training_samples);
  files.output("--plot", args.plot_svg);
  files.output("--plot-png", args.plot_png);
  for (const std::string& path : args.curves) files.output("--curves", path);
  files.check();
  std::vector<std::string> pictures{args.plot_svg, args.plot_png};
  pictures.insert(pictures.end(), args.curves.begin(), args.curves.end());
  refuse_to_clobber(pictures, args.overwrite, ", or choose another file name");
  // After the clash checks, so that a plot named like an input is reported as that, not as a format.
  if (!args.plot_svg.empty()) figure_format(args.plot_svg);
  if (!args.plot_png.empty() && figure_format(args.plot_png) != FigureFormat::png)
    throw UsageError("--plot-png " + args.plot_png + ": the name must end in .png (or use --plot, which takes .svg, .png or .pdf)");

  const TermPlan plan(spec);
  std::optional<TrainingSamples> samples;
  if (spec.training_samples) samples = read_training_samples(spec);
  const NicheDescription d = describe_niche(spec, plan, samples ? &*samples : nullptr, args.settings);
  const std::vector<std::string> warnings = describe_warnings(spec, d, args.settings);
  write_plots(args, spec, d, err);
  write_curves(args, spec, d, err);
  if (args.json) out << describe_json(spec, d, args.settings, warnings).dump(2) << "\n";
  else out << describe_text(spec, d, args.settings, warnings);
  return 0;
}

}  // namespace

void register_describe(CLI::App& app, CommandRegistry& registry) {
  auto args = std::make_shared<DescribeArgs>();
  CLI::App* cmd = app.add_subcommand("describe", "Describe the fitted niche: optimum, shape, tilt, breadth");
  cmd->footer(kDescribeHelp);
  cmd->add_option("model", args->models, "Model file (TOML; see docs/model-format.md); two or more: a model set side by\n"
                  "side with the Akaike-weighted optimum (docs/model-sets.md)")->required()->check(CLI::ExistingFile);
  cmd->add_option("--weights", args->weights, "W1,W2,...: weights of a model set (default: Akaike weights)")->delimiter(',');
  cmd->add_option("--pair", args->pair,
                  "A,B: the two continuous covariates of the pair section and the plot\n"
                  "(default: the first two with squared or product terms)");
  cmd->add_option("--at", args->at,
                  "NAME=VALUE: hold a continuous covariate at VALUE (raw units) instead of its training\n"
                  "mean (repeatable). A held covariate leaves the analysis");
  cmd->add_option("--level", args->levels, "NAME=LEVEL: evaluate at this level (name or code) of a categorical\ncovariate instead of its reference level (repeatable)");
  cmd->add_option("--fraction", args->settings.canonical.fraction,
                  "Niche breadth: distance from the peak at which the response falls to this fraction of\nits peak value")
      ->default_val(0.5)
      ->check(CLI::Range(0.0, 1.0).description("between 0 and 1"));
  cmd->add_option("--confidence", args->settings.canonical.confidence, "Confidence level of intervals and tests")
      ->default_val(0.95)
      ->check(CLI::Range(0.5, 0.9999));
  cmd->add_flag("--json", args->json, "Print JSON for pipelines instead of text (fields: docs/describe.md)");
  cmd->add_option("--plot", args->plot_svg,
                  "FILE.pdf, FILE.svg or FILE.png (format by extension): draw the pair: response bands and\n"
                  "contours, training sites and hull, optimum, axes (docs/figures.md)");
  cmd->add_option("--curves", args->curves,
                  "FILE: response curves, one panel per covariate with the others held as above: the\n"
                  "predicted response, its confidence band, training values as a rug, the training range\n"
                  "shaded; categorical covariates as a point per level. FILE.json for pipelines, or a\n"
                  "picture: .svg, .png or .pdf (repeatable)");
  cmd->add_option("--curve-points", args->settings.curve_options.points,
                  "Grid points of each continuous curve (it spans the training range and 15 % beyond each end)")
      ->default_val(101)
      ->check(CLI::Range(2, 100000));
  cmd->add_option("--plot-png", args->plot_png, "FILE.png: the same picture as a PNG as well (300 dpi)");
  cmd->add_flag("--overwrite", args->overwrite, "Replace existing --plot, --plot-png and --curves files");
  registry.add(cmd, [args](std::ostream& out, std::ostream& err) { return run_describe(*args, out, err); });
}

}  // namespace habcast::cli
