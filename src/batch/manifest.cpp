#include "batch/manifest.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <set>
#include <sstream>
#include <toml++/toml.h>

#include "core/base/error.hpp"
#include "core/base/number_text.hpp"
#include "core/base/toml_table_reader.hpp"
#include "batch/mosaic.hpp"
#include "predict/scenario_set.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

constexpr int kFormatVersion = 1;

/// Absolute, normalised: records compare paths as text, so the same file must always be spelled
/// the same way, whatever the current folder of the process that reads the manifest.
std::string resolve(const std::string& manifest_path, const std::string& relative) {
  const fs::path p(relative);
  if (p.is_absolute()) return p.lexically_normal().string();
  return fs::absolute(fs::path(manifest_path).parent_path() / p).lexically_normal().string();
}

bool valid_tile_id(const std::string& id) {
  if (id.empty() || id == "." || id == "..") return false;
  for (const char c : id)
    if (!(std::isalnum(static_cast<unsigned char>(c)) || c == '_' || c == '-' || c == '.')) return false;
  return true;
}

/// model = "M.toml" (one model) or models = ["A.toml", "B.toml", ...] (a model set, averaged in
/// every tile as `predict A.toml B.toml` does), with the set's weights and average_se.
void read_model_keys(TomlTableReader& top, BatchManifest& m) {
  const toml::node* model = top.get("model");
  const toml::node* models = top.get("models");
  if (model && models)
    throw InputError(located(m.path, toml_line(*models),
                             "model (line " + std::to_string(toml_line(*model)) + ") and models (line " +
                                 std::to_string(toml_line(*models)) + ") both name what every tile runs; keep one: "
                                 "model = \"M.toml\" for one model, models = [\"A.toml\", \"B.toml\"] for a model set"));
  if (!model && !models)
    throw InputError(located(m.path, 1, "missing model = \"MODEL.toml\" (the model file every tile uses), or "
                                        "models = [\"A.toml\", \"B.toml\"] for a model set"));
  if (model) {
    if (!model->is_string()) top.fail(*model, "model must be a quoted path to a model file");
    m.model_paths.push_back(resolve(m.path, *model->value<std::string>()));
    m.model_line = toml_line(*model);
  } else {
    if (!models->is_array()) top.fail(*models, "models must be an array of quoted paths, e.g. [\"a.toml\", \"b.toml\"]");
    std::map<std::string, long> seen;
    for (const toml::node& item : *models->as_array()) {
      if (!item.is_string()) top.fail(item, "each entry of models must be a quoted path to a model file");
      const std::string p = resolve(m.path, *item.value<std::string>());
      if (auto [it, fresh] = seen.emplace(p, toml_line(item)); !fresh)
        top.fail(item, "models lists " + *item.value<std::string>() + " twice; list each model of the set once (use "
                       "weights = [...] to weigh them)");
      m.model_paths.push_back(p);
    }
    m.model_line = toml_line(*models);
    if (m.model_paths.size() < 2)
      top.fail(*models, "models lists " + std::to_string(m.model_paths.size()) +
                            " model file; a model set needs two or more (for one model write model = \"M.toml\")");
  }
  m.model_path = m.model_paths.front();

  if (const toml::node* w = top.get("weights")) {
    if (!m.model_set())
      top.fail(*w, "weights weigh the models of a set: give models = [\"A.toml\", \"B.toml\", ...], or remove weights");
    if (!w->is_array()) top.fail(*w, "weights must be an array of numbers, one per model, e.g. [0.6, 0.4]");
    double sum = 0.0;
    for (const toml::node& item : *w->as_array()) {
      const double v = top.finite_number(item, "each weight");
      if (v < 0.0) top.fail(item, "weights must not be negative, got " + significant(v, 6));
      sum += v;
      m.weights.push_back(v);
    }
    m.weights_line = toml_line(*w);
    if (m.weights.size() != m.model_paths.size())
      top.fail(*w, "weights gives " + std::to_string(m.weights.size()) + " weights for " +
                       std::to_string(m.model_paths.size()) + " models (line " + std::to_string(m.model_line) +
                       "); give one per model, in the order of models");
    if (!(sum > 0.0)) top.fail(*w, "weights are all zero; at least one model must carry weight");
  }
  if (const toml::node* f = top.get("average_se")) {
    if (!m.model_set()) top.fail(*f, "average_se is the unconditional standard error of a model set: give models = [...], or remove it");
    const std::optional<std::string> form = f->value<std::string>();
    if (!f->is_string() || (*form != "revised" && *form != "2002"))
      top.fail(*f, "average_se must be \"revised\" (sqrt(sum w (se^2 + d^2)), the default) or \"2002\" "
                   "(sum w sqrt(se^2 + d^2)), as predict --average-se");
    m.average_se = *form;
  }
}

void read_top(TomlTableReader& top, BatchManifest& m) {
  const toml::node* v = top.get("habcast_batch");
  if (!v)
    throw InputError(located(m.path, 1, "not a habcast batch manifest: the key habcast_batch = " +
                                            std::to_string(kFormatVersion) + " is missing at the top"));
  if (!v->is_integer() || *v->value<std::int64_t>() != kFormatVersion)
    top.fail(*v, "unsupported manifest version; this habcast reads habcast_batch = " + std::to_string(kFormatVersion));
  read_model_keys(top, m);
  const toml::node* output = top.get("output");
  if (!output) throw InputError(located(m.path, 1, "missing output = \"FOLDER\" (where the tiles, mosaic and report go)"));
  if (!output->is_string()) top.fail(*output, "output must be a quoted path to a folder");
  m.output_dir = resolve(m.path, *output->value<std::string>());
}

void read_predict(const toml::table& root, BatchManifest& m) {
  const toml::node* node = root.get("predict");
  if (!node) return;
  if (!node->is_table()) throw InputError(located(m.path, toml_line(*node), "predict must be a table [predict]"));
  TomlTableReader t(*node->as_table(), "predict.", "in [predict]", m.path);
  if (auto level = t.number("level")) {
    if (!(*level > 0.0 && *level < 1.0)) t.fail(*t.get("level"), "predict.level must lie strictly between 0 and 1, e.g. 0.95");
    m.level = *level;
  }
  if (const toml::node* n = t.get("block_size")) {
    if (!n->is_integer() || *n->value<std::int64_t>() < 16 || *n->value<std::int64_t>() > 16384)
      t.fail(*n, "predict.block_size must be a whole number of pixels from 16 to 16384");
    m.block_size = static_cast<int>(*n->value<std::int64_t>());
  }
  if (const toml::node* n = t.get("creation_options")) {
    if (!n->is_array()) t.fail(*n, "predict.creation_options must be an array of \"KEY=VALUE\" strings");
    for (const toml::node& item : *n->as_array()) {
      if (!item.is_string() || item.value<std::string>()->find('=') == std::string::npos)
        t.fail(item, "each creation option must be a quoted \"KEY=VALUE\", e.g. \"COMPRESS=ZSTD\"");
      m.creation_options.push_back(*item.value<std::string>());
    }
  }
  m.overviews = t.boolean("overviews").value_or(false);
  if (auto pct = t.number("max_extrapolated")) {
    if (*pct < 0.0 || *pct > 100.0) t.fail(*t.get("max_extrapolated"), "predict.max_extrapolated is a percentage from 0 to 100");
    m.max_extrapolated_percent = *pct;
    m.max_extrapolated_line = toml_line(*t.get("max_extrapolated"));
  }
  if (auto threshold = t.number("threshold")) {
    m.threshold = *threshold;
    m.threshold_line = toml_line(*t.get("threshold"));
  }
  if (const toml::node* n = t.get("threshold_from")) {
    if (!n->is_string())
      t.fail(*n, "predict.threshold_from must be a quoted path to habcast evaluate's JSON report or its binary map");
    m.threshold_from = resolve(m.path, *n->value<std::string>());
    m.threshold_from_line = toml_line(*n);
    if (m.threshold_line == 0) m.threshold_line = m.threshold_from_line;
  }
  t.reject_unknown("level, block_size, creation_options, overviews, max_extrapolated, threshold, threshold_from");
}

void read_units_table(const toml::table& root, BatchManifest& m) {
  const toml::node* node = root.get("units");
  if (!node) return;
  if (!node->is_table()) throw InputError(located(m.path, toml_line(*node), "units must be a table [units] with path = \"...\""));
  TomlTableReader t(*node->as_table(), "units.", "in [units]", m.path);
  m.units_line = toml_line(*node);
  const toml::node* p = t.get("path");
  if (!p || !p->is_string())
    throw InputError(located(m.path, toml_line(p ? *p : *node), "[units] needs path = \"units.gpkg\" (a quoted path to the polygons)"));
  m.units_path = resolve(m.path, *p->value<std::string>());
  m.units_layer = t.string("layer").value_or("");
  m.units_id = t.string("id").value_or("");
  if (const toml::node* th = t.get("threshold")) {
    if (th->is_number()) m.units_threshold = significant(*th->value<double>(), 17);
    else if (th->is_string()) m.units_threshold = resolve(m.path, *th->value<std::string>());
    else t.fail(*th, "units.threshold is a number, or a quoted path to an evaluate JSON report");
  }
  t.reject_unknown("path, layer, id, threshold");
}

void read_pattern(const toml::table& root, BatchManifest& m) {
  const toml::node* node = root.get("tiles");
  if (!node) return;
  if (!node->is_table())
    throw InputError(located(m.path, toml_line(*node), "tiles must be a table [tiles] with pattern = \"...\"; "
                                                     "for an explicit list use [[tile]] entries"));
  TomlTableReader t(*node->as_table(), "tiles.", "in [tiles]", m.path);
  const toml::node* p = t.get("pattern");
  if (!p || !p->is_string())
    throw InputError(located(m.path, toml_line(p ? *p : *node),
                             "[tiles] needs pattern = \"tiles/{tile}/{covariate}.tif\" (a quoted path with both placeholders)"));
  const std::string text = *p->value<std::string>();
  if (text.find("{tile}") == std::string::npos || text.find("{covariate}") == std::string::npos)
    t.fail(*p, "pattern \"" + text + "\" must contain both {tile} and {covariate}, e.g. \"tiles/{tile}/{covariate}.tif\"");
  m.pattern = resolve(m.path, text);
  m.pattern_as_written = text;
  m.pattern_line = toml_line(*p);
  t.reject_unknown("pattern");
}

void read_tile_table(const toml::table& root, BatchManifest& m) {
  const toml::node* node = root.get("tile");
  if (!node) return;
  if (!node->is_array_of_tables())
    throw InputError(located(m.path, toml_line(*node), "tile entries must be written as [[tile]] tables with id = \"...\""));
  std::map<std::string, long> first_line;
  for (const toml::node& item : *node->as_array()) {
    const toml::table& table = *item.as_table();
    ManifestTile tile;
    tile.line = toml_line(item);
    const toml::node* id = table.get("id");
    if (!id || !id->is_string())
      throw InputError(located(m.path, tile.line, "each [[tile]] needs id = \"NAME\" (letters, digits, _ - .)"));
    tile.id = *id->value<std::string>();
    tile.line = toml_line(*id);
    if (!valid_tile_id(tile.id))
      throw InputError(located(m.path, tile.line, "tile id \"" + tile.id +
                                                      "\" may hold only letters, digits, _, - and . (it names a folder)"));
    if (auto [it, fresh] = first_line.emplace(tile.id, tile.line); !fresh)
      throw InputError(located(m.path, tile.line, "duplicate tile id \"" + tile.id + "\" (first used on line " +
                                                      std::to_string(it->second) + "); every tile needs its own id"));
    for (auto&& [key, value] : table) {
      const std::string name(key.str());
      if (name == "id") continue;
      if (!value.is_string())
        throw InputError(located(m.path, toml_line(value), "tile \"" + tile.id + "\": " + name +
                                                             " must be a quoted path to that covariate's raster"));
      tile.rasters.emplace_back(name, resolve(m.path, *value.value<std::string>()));
      tile.raster_lines.push_back(static_cast<long>(key.source().begin.line));
    }
    m.tiles.push_back(std::move(tile));
  }
}

const char* const kScenarioNameRule =
    "letters, digits, '_', '-' and '.' only, starting with a letter or digit (it names the scenario's folder in "
    "every tile and in the region)";

/// `[scenario.tiles]`: tile id -> { covariate = "FILE.tif", ... }, exactly the scenario's covariates.
void read_scenario_tiles(const toml::node& node, const BatchManifest& m, ManifestScenario& s) {
  if (!node.is_table())
    throw InputError(located(m.path, toml_line(node), "scenario \"" + s.name + "\": tiles must be a table of TILE = "
                                                      "{ COVARIATE = \"FILE.tif\" }, e.g. [scenario.tiles] r1c2 = { tmin = \"...\" }"));
  for (auto&& [key, value] : *node.as_table()) {
    ManifestTile tile;
    tile.id = std::string(key.str());
    tile.line = static_cast<long>(key.source().begin.line);
    if (!valid_tile_id(tile.id))
      throw InputError(located(m.path, tile.line, "scenario \"" + s.name + "\": tile id \"" + tile.id +
                                                      "\" may hold only letters, digits, _, - and ."));
    if (!value.is_table())
      throw InputError(located(m.path, tile.line, "scenario \"" + s.name + "\": tile " + tile.id +
                                                      " must be a table { COVARIATE = \"FILE.tif\" }"));
    std::set<std::string> given;
    for (auto&& [ckey, path] : *value.as_table()) {
      const std::string covariate(ckey.str());
      const long line = static_cast<long>(ckey.source().begin.line);
      if (std::find(s.covariates.begin(), s.covariates.end(), covariate) == s.covariates.end())
        throw InputError(located(m.path, line, "scenario \"" + s.name + "\", tile " + tile.id + ": " + covariate +
                                                   " is not among the covariates it replaces (line " +
                                                   std::to_string(s.covariates_line) + "); add it there or remove it here"));
      if (!path.is_string())
        throw InputError(located(m.path, line, "scenario \"" + s.name + "\", tile " + tile.id + ": " + covariate +
                                                   " must be a quoted path to that covariate's raster"));
      tile.rasters.emplace_back(covariate, resolve(m.path, *path.value<std::string>()));
      tile.raster_lines.push_back(line);
      given.insert(covariate);
    }
    for (const std::string& c : s.covariates)
      if (!given.count(c))
        throw InputError(located(m.path, tile.line, "scenario \"" + s.name + "\", tile " + tile.id + " has no raster for " +
                                                        c + "; give every covariate the scenario replaces (line " +
                                                        std::to_string(s.covariates_line) + ")"));
    s.tiles.push_back(std::move(tile));
  }
}

ManifestScenario read_scenario(const toml::table& table, const BatchManifest& m, std::size_t index) {
  const std::string number = "[[scenario]] number " + std::to_string(index + 1);
  TomlTableReader t(table, "scenario.", "in " + number, m.path);
  ManifestScenario s;
  const toml::node* name = t.get("name");
  if (!name) t.fail_here(number + " needs name = \"NAME\" (" + kScenarioNameRule + ")");
  if (!name->is_string()) t.fail(*name, number + ": name must be a quoted NAME (" + kScenarioNameRule + ")");
  s.name = *name->value<std::string>();
  s.line = toml_line(*name);
  if (!valid_scenario_name(s.name))
    t.fail(*name, "scenario name \"" + s.name + "\": use " + kScenarioNameRule + "; not \"baseline\" (the baseline's folder)");
  if (reserved_region_name(s.name))
    t.fail(*name, "scenario name \"" + s.name + "\" is taken by the batch's own " +
                      (s.name == "tiles" ? std::string("folder of tiles") : std::string("region files")) +
                      "; choose another name");
  s.description = t.string("description").value_or("");
  const toml::node* covariates = t.get("covariates");
  if (!covariates)
    t.fail(*name, "scenario \"" + s.name + "\" needs covariates = [\"COVARIATE\", ...]: the covariates whose rasters it replaces");
  if (!covariates->is_array() || covariates->as_array()->empty())
    t.fail(*covariates, "scenario \"" + s.name + "\": covariates must be a non-empty array of covariate names, e.g. [\"tmin\", \"precip\"]");
  s.covariates_line = toml_line(*covariates);
  for (const toml::node& item : *covariates->as_array()) {
    if (!item.is_string()) t.fail(item, "scenario \"" + s.name + "\": each entry of covariates is a quoted covariate name");
    const std::string c = *item.value<std::string>();
    if (std::find(s.covariates.begin(), s.covariates.end(), c) != s.covariates.end())
      t.fail(item, "scenario \"" + s.name + "\" lists covariate " + c + " twice; list it once");
    s.covariates.push_back(c);
  }
  if (const toml::node* p = t.get("pattern")) {
    if (!p->is_string()) t.fail(*p, "scenario \"" + s.name + "\": pattern must be a quoted path with {tile}");
    const std::string text = *p->value<std::string>();
    if (text.find("{tile}") == std::string::npos)
      t.fail(*p, "scenario \"" + s.name + "\": pattern \"" + text + "\" must contain {tile} (each tile has its own "
                 "rasters), e.g. \"tiles/{tile}/" + s.name + "/{covariate}.tif\"");
    if (s.covariates.size() > 1 && text.find("{covariate}") == std::string::npos)
      t.fail(*p, "scenario \"" + s.name + "\": pattern \"" + text + "\" has no {covariate}, so its " +
                     std::to_string(s.covariates.size()) + " covariates would all read one file; add {covariate}");
    s.pattern = resolve(m.path, text);
    s.pattern_as_written = text;
    s.pattern_line = toml_line(*p);
  }
  if (const toml::node* tiles = t.get("tiles")) read_scenario_tiles(*tiles, m, s);
  if (!s.pattern && s.tiles.empty())
    t.fail(*name, "scenario \"" + s.name + "\" says where no tile's rasters are: add pattern = \"tiles/{tile}/" + s.name +
                      "/{covariate}.tif\" and/or a table [scenario.tiles] with TILE = { COVARIATE = \"FILE.tif\" }");
  t.reject_unknown("name, description, covariates, pattern, tiles");
  return s;
}

void read_scenarios(const toml::table& root, BatchManifest& m) {
  const toml::node* node = root.get("scenario");
  if (!node) return;
  if (!node->is_array_of_tables())
    throw InputError(located(m.path, toml_line(*node), "scenarios must be written as [[scenario]] tables with name = \"...\""));
  std::map<std::string, long> first_line;
  const toml::array& list = *node->as_array();
  for (std::size_t i = 0; i < list.size(); ++i) {
    ManifestScenario s = read_scenario(*list.get(i)->as_table(), m, i);
    if (auto [it, fresh] = first_line.emplace(s.name, s.line); !fresh)
      throw InputError(located(m.path, s.line, "scenario \"" + s.name + "\" is declared twice (first on line " +
                                                   std::to_string(it->second) + "); give each scenario its own name"));
    m.scenarios.push_back(std::move(s));
  }
}

/// What the model set, scenarios and other options allow together.
void check_combinations(const BatchManifest& m) {
  if ((m.threshold || !m.threshold_from.empty()) && m.scenarios.empty())
    throw InputError(located(m.path, m.threshold_line, "predict.threshold and threshold_from classify a scenario's change: "
                                                       "add [[scenario]] tables, or remove them"));
  if (!m.scenarios.empty() && m.max_extrapolated_percent)
    throw InputError(located(m.path, m.max_extrapolated_line,
                             "predict.max_extrapolated would judge the baseline and every scenario at once; with scenarios "
                             "it is not available: read each scenario's extrapolated share in batch-report.json, or remove it"));
  if (!m.units_path.empty() && (!m.scenarios.empty() || m.model_set()))
    throw InputError(located(m.path, m.units_line, std::string("[units] summaries are made by a single model's predict; with ") +
                                            (m.model_set() ? "a model set" : "scenarios") +
                                            " they are not available yet: remove [units], or run the units in a batch of one model"));
}

}  // namespace

BatchManifest parse_batch_manifest(const std::string& text, const std::string& path) {
  BatchManifest m;
  m.path = path;
  toml::table root;
  try {
    root = toml::parse(text, path);
  } catch (const toml::parse_error& e) {
    throw InputError(located(path, static_cast<long>(e.source().begin.line), "not valid TOML: " + std::string(e.description())));
  }
  TomlTableReader top(root, "", "at the top level", path);
  read_top(top, m);
  top.get("predict");
  top.get("tiles");
  top.get("tile");
  top.get("units");
  top.get("scenario");
  top.reject_unknown("habcast_batch, model or models, weights, average_se, output, [predict], [tiles], [[tile]], [units] "
                     "and [[scenario]]");
  read_predict(root, m);
  read_units_table(root, m);
  read_pattern(root, m);
  read_tile_table(root, m);
  if (!m.pattern && m.tiles.empty())
    throw InputError(located(path, 1, "no tiles: add [tiles] pattern = \"tiles/{tile}/{covariate}.tif\" or [[tile]] entries"));
  read_scenarios(root, m);
  check_combinations(m);
  return m;
}

bool reserved_region_name(const std::string& name) {
  static const std::set<std::string> fixed{"tiles",     "batch-report.json", "batch-report.csv",
                                           "units.gpkg", "units.csv",         "units.json"};
  if (fixed.count(name)) return true;
  const std::vector<std::string>& layers = mosaic_owned_names();
  return std::find(layers.begin(), layers.end(), name) != layers.end();
}

BatchManifest read_batch_manifest(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path + ": cannot open the batch manifest; check the path and that it is readable");
  std::ostringstream buffer;
  buffer << in.rdbuf();
  if (in.bad()) throw InputError(path + ": cannot read the batch manifest");
  return parse_batch_manifest(buffer.str(), path);
}

}  // namespace habcast
