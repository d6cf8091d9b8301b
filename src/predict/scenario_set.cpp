#include "predict/scenario_set.hpp"

#include <cctype>
#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>
#include <toml++/toml.h>

#include "core/base/error.hpp"
#include "core/base/toml_table_reader.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

constexpr int kFormatVersion = 1;

std::string resolve(const std::string& file, const std::string& relative) {
  const fs::path p(relative);
  if (p.is_absolute() || file.empty()) return p.lexically_normal().string();
  return (fs::path(file).parent_path() / p).lexically_normal().string();
}

const char* kNameRule = "letters, digits, '_', '-' and '.' only, starting with a letter or digit (it names the "
                        "scenario's output folder), not \"baseline\" and not a name of the run's own files "
                        "(scenarios.json, scenarios.csv)";

Scenario read_scenario(const toml::table& table, const std::string& path, std::size_t index) {
  const std::string place = "in [[scenario]] number " + std::to_string(index + 1);
  TomlTableReader t(table, "", place, path);
  Scenario s;
  s.source = path + ":" + std::to_string(toml_line(table));
  const auto name = t.string("name");
  if (!name) t.fail_here("[[scenario]] number " + std::to_string(index + 1) + " has no name = \"...\"");
  if (!valid_scenario_name(*name)) t.fail(*t.get("name"), "scenario name \"" + *name + "\": use " + kNameRule);
  s.name = *name;
  s.description = t.string("description").value_or("");
  const toml::node* cov = t.get("covariates");
  if (!cov)
    t.fail_here("scenario \"" + s.name + "\" replaces no covariate: add [scenario.covariates] with NAME = \"FILE.tif\"");
  if (!cov->is_table()) t.fail(*cov, "scenario \"" + s.name + "\": covariates must be a table of NAME = \"FILE.tif\"");
  for (auto&& [key, value] : *cov->as_table()) {
    if (!value.is_string())
      throw InputError(located(path, toml_line(value), "scenario \"" + s.name + "\": covariate " + std::string(key.str()) +
                                                           " must be a quoted path to its raster"));
    s.rasters.emplace_back(std::string(key.str()), resolve(path, *value.value<std::string>()));
  }
  if (s.rasters.empty())
    t.fail(*cov, "scenario \"" + s.name + "\" replaces no covariate; a scenario equal to the baseline needs no run");
  t.reject_unknown("name, description, covariates");
  return s;
}

void check_unique(const ScenarioSet& set) {
  std::set<std::string> names;
  for (const Scenario& s : set.scenarios)
    if (!names.insert(s.name).second)
      throw InputError(s.source + ": scenario \"" + s.name + "\" is declared twice; give each scenario its own name");
}

}  // namespace

bool valid_scenario_name(const std::string& name) {
  if (name.empty() || name.size() > 64 || name == "baseline" || name == "scenarios.json" || name == "scenarios.csv")
    return false;
  // A leading '.' or '-' would hide the folder or read as an option; it also keeps the names of
  // habcast's own hidden files (lock, temporaries, commit records) out of reach.
  if (!std::isalnum(static_cast<unsigned char>(name.front()))) return false;
  for (const char c : name)
    if (!(std::isalnum(static_cast<unsigned char>(c)) || c == '_' || c == '-' || c == '.')) return false;
  return true;
}

ScenarioSet parse_scenario_file(const std::string& text, const std::string& path) {
  ScenarioSet set;
  set.path = path;
  toml::table root;
  try {
    root = toml::parse(text, path);
  } catch (const toml::parse_error& e) {
    throw InputError(located(path, static_cast<long>(e.source().begin.line), "not valid TOML: " + std::string(e.description())));
  }
  TomlTableReader top(root, "", "at the top level", path);
  const toml::node* v = top.get("habcast_scenarios");
  if (!v)
    throw InputError(located(path, 1, "not a habcast scenario file: the key habcast_scenarios = " +
                                          std::to_string(kFormatVersion) + " is missing at the top"));
  if (!v->is_integer() || *v->value<std::int64_t>() != kFormatVersion)
    top.fail(*v, "unsupported scenario file version; this habcast reads habcast_scenarios = " + std::to_string(kFormatVersion));
  set.threshold = top.number("threshold");
  const toml::array* list = top.array("scenario");
  top.reject_unknown("habcast_scenarios, threshold and [[scenario]]");
  if (!list || list->empty())
    throw InputError(located(path, 1, "no scenarios: add [[scenario]] tables with name = \"...\" and [scenario.covariates]"));
  for (std::size_t i = 0; i < list->size(); ++i) {
    const toml::node& n = *list->get(i);
    if (!n.is_table()) throw InputError(located(path, toml_line(n), "scenario must be an array of tables [[scenario]]"));
    set.scenarios.push_back(read_scenario(*n.as_table(), path, i));
  }
  check_unique(set);
  return set;
}

ScenarioSet read_scenario_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path + ": cannot open the scenario file; check the path and that it is readable");
  std::ostringstream buffer;
  buffer << in.rdbuf();
  if (in.bad()) throw InputError(path + ": cannot read the scenario file");
  return parse_scenario_file(buffer.str(), path);
}

void add_scenario_arguments(const std::vector<std::string>& arguments, ScenarioSet& set) {
  for (const std::string& a : arguments) {
    const auto colon = a.find(':');
    const auto eq = a.find('=', colon == std::string::npos ? 0 : colon);
    if (colon == std::string::npos || eq == std::string::npos || colon == 0 || eq == colon + 1 || eq + 1 == a.size())
      throw UsageError("--scenario expects NAME:COVARIATE=FILE (for example --scenario warm-2050:tmin=tmin_2050.tif), "
                       "got \"" + a + "\"");
    const std::string name = a.substr(0, colon);
    const std::string covariate = a.substr(colon + 1, eq - colon - 1);
    if (!valid_scenario_name(name)) throw UsageError("--scenario " + a + ": scenario name \"" + name + "\": use " + kNameRule);
    Scenario* s = nullptr;
    for (Scenario& existing : set.scenarios)
      if (existing.name == name) s = &existing;
    if (!s) {
      set.scenarios.push_back({name, "", {}, "--scenario " + name});
      s = &set.scenarios.back();
    }
    for (const auto& [c, file] : s->rasters) {
      (void)file;
      if (c == covariate) throw UsageError("--scenario " + name + ":" + covariate + "=... is given twice");
    }
    s->rasters.emplace_back(covariate, a.substr(eq + 1));
  }
  check_unique(set);
}

}  // namespace habcast
