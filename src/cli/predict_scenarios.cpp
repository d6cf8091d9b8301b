#include "cli/predict_scenarios.hpp"

#include <ostream>

#include "core/base/error.hpp"
#include "predict/prediction_report.hpp"
#include "predict/scenario_run.hpp"

namespace habcast::cli {

const char* const kScenarioHelp =
    "\n\nScenarios (docs/scenarios.md): with --scenarios FILE.toml or --scenario NAME:COVARIATE=FILE the\n"
    "model is run over the baseline (the model file's rasters and -c) and every scenario in one pass;\n"
    "rasters shared by several scenarios are read once. The output folder gets baseline/ and one\n"
    "folder per scenario with the outputs above, and in each scenario's folder:\n"
    "  change.tif         Float32, 5 bands: change (scenario - baseline), its standard error from the\n"
    "                     gradient difference (not sqrt(se_s^2 + se_b^2)), lower and upper limit at\n"
    "                     --level, probability that suitability fell\n"
    "  change_class.tif   with --threshold: 1 stable unsuitable, 2 stable suitable, 3 gain, 4 loss,\n"
    "                     5 not distinguishable; +16 baseline extrapolated, +32 scenario extrapolated\n"
    "and scenarios.json, scenarios.csv at the top (areas, shares, extrapolation per cause).\n"
    "--threshold-from eval.json (habcast evaluate --json) or binary.tif (--write-binary) takes the\n"
    "threshold evaluate recorded. --change-quicklook png|svg|pdf draws each scenario's classes.\n"
    "  habcast predict model.toml --scenarios futures.toml --threshold 0.42 -o out/\n"
    "  habcast predict model.toml --scenario warm:tmin=tmin_2050.tif --scenario warm:precip=p_2050.tif -o out/";

int run_predict_scenarios(const PredictOptions& options, const ScenarioArgs& args, Progress& progress, bool json,
                          bool quiet, std::ostream& out) {
  if (!args.file.empty() && !args.inline_args.empty())
    throw UsageError("scenarios given twice: --scenarios " + args.file +
                     " and --scenario; declare them all in the file, or all on the command line");
  ScenarioRunOptions o;
  o.predict = options;
  o.threshold = args.threshold;
  o.threshold_from = args.threshold_from;
  o.change_quicklook = args.change_quicklook;
  if (!args.file.empty()) o.scenarios = read_scenario_file(args.file);
  add_scenario_arguments(args.inline_args, o.scenarios);
  const ScenarioSummary summary = run_scenarios(o, progress, HABCAST_VERSION);
  for (const std::string& w : summary.warnings) progress.message("warning", w);
  if (json) {
    out << summary.report.dump() << "\n";
  } else if (!quiet) {
    for (const auto& s : summary.report["scenarios"]) {
      out << "Scenario " << s["name"].get<std::string>() << ": " << s["compared_pixels"].get<long long>()
          << " pixels compared";
      if (!s["mean_change"].is_null()) out << ", mean change " << format_value(s["mean_change"].get<double>());
      if (s.contains("classes"))
        out << "; gain " << format_percent(s["classes"]["gain"]["share"].get<double>()) << ", loss "
            << format_percent(s["classes"]["loss"]["share"].get<double>()) << ", not distinguishable "
            << format_percent(s["classes"]["not_distinguishable"]["share"].get<double>());
      out << ".\n";
    }
    out << "Outputs:\n";
    for (const std::string& p : summary.outputs) out << "  " << p << "\n";
  }
  return static_cast<int>(summary.exit_code);
}

}  // namespace habcast::cli
