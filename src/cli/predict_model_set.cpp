#include "cli/predict_model_set.hpp"

#include <ostream>

#include "predict/model_set_run.hpp"
#include "core/base/error.hpp"
#include "predict/prediction_report.hpp"
#include "predict/scenario_set.hpp"

namespace habcast::cli {

const char* const kModelSetHelp =
    "\n\nModel sets (docs/model-sets.md): with two or more model files (same response, family and training\n"
    "data) the output folder gets their average: suitability.tif the weighted mean on the response\n"
    "scale (Akaike weights from each file's aic, or --weights), uncertainty.tif the unconditional\n"
    "standard error (Burnham & Anderson 2002) and limits, model_choice.tif the share of the variance\n"
    "from model choice, extrapolation.tif the union of every model's flags, report.json with weights,\n"
    "AIC, dAIC and each model's flags. With --scenarios, every model runs on every stack and each\n"
    "scenario folder gets the change of the averaged prediction (unconditional SE).\n"
    "  habcast predict m1.toml m2.toml m3.toml -o out-avg/";

int run_predict_model_set(const PredictOptions& options, const std::vector<std::string>& models, const ModelSetArgs& args,
                          const ScenarioArgs& scenarios, Progress& progress, bool json, bool quiet, std::ostream& out) {
  if (!scenarios.file.empty() && !scenarios.inline_args.empty())
    throw UsageError("scenarios given twice: --scenarios " + scenarios.file +
                     " and --scenario; declare them all in the file, or all on the command line");
  if (!scenarios.change_quicklook.empty())
    throw UsageError("--change-quicklook draws one model's change classes; for a model set, draw change_class.tif in a GIS");
  ModelSetOptions o;
  if (!scenarios.file.empty()) o.scenarios = read_scenario_file(scenarios.file);
  add_scenario_arguments(scenarios.inline_args, o.scenarios);
  o.threshold = scenarios.threshold;
  o.threshold_from = scenarios.threshold_from;
  o.predict = options;
  o.model_paths = models;
  o.weights = args.weights;
  o.form = args.se_form == "2002" ? UnconditionalForm::form_2002 : UnconditionalForm::revised;
  const ModelSetSummary summary = run_model_set(o, progress, HABCAST_VERSION);
  for (const std::string& w : summary.warnings) progress.message("warning", w);
  if (json) {
    out << summary.report.dump() << "\n";
  } else if (!quiet && summary.report["kind"] == "model_set_scenarios") {
    out << "Averaged " << models.size() << " models over the baseline and " << summary.report["scenarios"].size()
        << " scenarios.\nOutputs:\n";
    for (const std::string& p : summary.outputs) out << "  " << p << "\n";
  } else if (!quiet) {
    out << "Averaged " << summary.report["models"].size() << " models:";
    for (const auto& m : summary.report["models"])
      out << " " << m["path"].get<std::string>() << " (weight " << format_value(m["weight"].get<double>()) << ")";
    out << ".\nOutputs:\n";
    for (const std::string& p : summary.outputs) out << "  " << p << "\n";
  }
  return static_cast<int>(summary.exit_code);
}

}  // namespace habcast::cli
