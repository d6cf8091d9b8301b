#pragma once
// Named scenarios of one projection: each replaces the rasters of some covariates and keeps the
// baseline's for the others. Declared in a scenario file (docs/scenarios.md) or on the command
// line (--scenario NAME:COVARIATE=FILE, repeatable).
#include <optional>
#include <string>
#include <utility>
#include <vector>

namespace habcast {

struct Scenario {
  std::string name;         ///< also the name of its output folder
  std::string description;
  std::vector<std::pair<std::string, std::string>> rasters;  ///< covariate -> raster, in the order given
  std::string source;       ///< "FILE:LINE" or "--scenario", for messages
};

struct ScenarioSet {
  std::vector<Scenario> scenarios;        ///< in the order declared
  std::optional<double> threshold;        ///< the file's threshold, if it sets one
  std::string path;                       ///< the scenario file, or empty
};

/// Parses a scenario file's text (`path` names it in messages; relative raster paths are taken
/// from its folder). Throws InputError naming file and line.
ScenarioSet parse_scenario_file(const std::string& text, const std::string& path);
ScenarioSet read_scenario_file(const std::string& path);

/// Adds the scenarios of --scenario NAME:COVARIATE=FILE arguments, grouped by NAME in order of first
/// appearance. Throws UsageError on a malformed argument or a covariate given twice for a name.
void add_scenario_arguments(const std::vector<std::string>& arguments, ScenarioSet& set);

/// Whether `name` can name a scenario and its folder: letters, digits, '_', '-', '.', starting
/// with a letter or digit, not "baseline" (the baseline's folder) nor "scenarios.json" or
/// "scenarios.csv" (the run's own files), at most 64 characters.
bool valid_scenario_name(const std::string& name);

}  // namespace habcast
