#include "batch/manifest.hpp"

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

void read_top(TomlTableReader& top, BatchManifest& m) {
  const toml::node* v = top.get("habcast_batch");
  if (!v)
    throw InputError(located(m.path, 1, "not a habcast batch manifest: the key habcast_batch = " +
                                            std::to_string(kFormatVersion) + " is missing at the top"));
  if (!v->is_integer() || *v->value<std::int64_t>() != kFormatVersion)
    top.fail(*v, "unsupported manifest version; this habcast reads habcast_batch = " + std::to_string(kFormatVersion));
  const toml::node* model = top.get("model");
  if (!model) throw InputError(located(m.path, 1, "missing model = \"MODEL.toml\" (the model file every tile uses)"));
  if (!model->is_string()) top.fail(*model, "model must be a quoted path to a model file");
  m.model_path = resolve(m.path, *model->value<std::string>());
  m.model_line = toml_line(*model);
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
  }
  t.reject_unknown("level, block_size, creation_options, overviews, max_extrapolated");
}

void read_units_table(const toml::table& root, BatchManifest& m) {
  const toml::node* node = root.get("units");
  if (!node) return;
  if (!node->is_table()) throw InputError(located(m.path, toml_line(*node), "units must be a table [units] with path = \"...\""));
  TomlTableReader t(*node->as_table(), "units.", "in [units]", m.path);
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
  top.reject_unknown("habcast_batch, model, output, [predict], [tiles], [[tile]] and [units]");
  read_predict(root, m);
  read_units_table(root, m);
  read_pattern(root, m);
  read_tile_table(root, m);
  if (!m.pattern && m.tiles.empty())
    throw InputError(located(path, 1, "no tiles: add [tiles] pattern = \"tiles/{tile}/{covariate}.tif\" or [[tile]] entries"));
  return m;
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
