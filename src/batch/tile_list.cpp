#include "batch/tile_list.hpp"

#include <algorithm>
#include <filesystem>
#include <map>
#include <regex>
#include <set>

#include "core/base/error.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

std::string replace_all(std::string text, const std::string& what, const std::string& with) {
  for (std::size_t at = text.find(what); at != std::string::npos; at = text.find(what, at + with.size()))
    text.replace(at, what.size(), with);
  return text;
}

std::string regex_escape(const std::string& literal) {
  static const std::string special = R"(\^$.|?*+()[]{})";
  std::string out;
  for (const char c : literal) {
    if (special.find(c) != std::string::npos) out += '\\';
    out += c;
  }
  return out;
}

/// A regex for the part of the pattern below `base`: literals escaped, the first {tile} captured,
/// later ones required to repeat it.
std::regex tail_regex(const std::string& tail) {
  std::string re;
  bool captured = false;
  std::size_t from = 0;
  for (std::size_t at = tail.find("{tile}"); at != std::string::npos; at = tail.find("{tile}", from)) {
    re += regex_escape(tail.substr(from, at - from));
    re += captured ? "\\1" : "([A-Za-z0-9_.-]+)";
    captured = true;
    from = at + 6;
  }
  re += regex_escape(tail.substr(from));
  return std::regex(re);
}

/// The covariates every tile needs a raster for, and words for messages about them.
struct Needed {
  std::vector<std::string> names;  ///< in the order they first appear in the model(s)
  std::string owner;               ///< "the model M.toml" or "no model of the set (A.toml, B.toml)"
  bool set = false;

  explicit Needed(const std::vector<const ModelSpec*>& models) : set(models.size() > 1) {
    for (const ModelSpec* spec : models)
      for (const Covariate& c : spec->covariates)
        if (std::find(names.begin(), names.end(), c.name) == names.end()) names.push_back(c.name);
    if (!set) {
      owner = "the model " + models.front()->path;
    } else {
      for (const ModelSpec* spec : models) owner += (owner.empty() ? "" : ", ") + spec->path;
      owner = "no model of the set (" + owner + ")";
    }
  }
  [[nodiscard]] bool has(const std::string& name) const { return std::find(names.begin(), names.end(), name) != names.end(); }
  [[nodiscard]] std::string list() const {
    std::string s;
    for (const std::string& n : names) s += (s.empty() ? "" : ", ") + n;
    return s;
  }
  /// "..., which the model M does not have; its covariates are a, b"
  [[nodiscard]] std::string lacking() const {
    return set ? ", which " + owner + " has; their covariates are " + list()
               : ", which " + owner + " does not have; its covariates are " + list();
  }
};

std::vector<Tile> pattern_tiles(const BatchManifest& m, const Needed& needed) {
  std::set<std::string> ids;
  for (const std::string& c : needed.names)
    for (const std::string& id : glob_tile_ids(replace_all(*m.pattern, "{covariate}", c))) ids.insert(id);
  ids.erase(".");
  ids.erase("..");
  if (ids.empty())
    throw InputError(located(m.path, m.pattern_line,
                             "pattern \"" + m.pattern_as_written + "\" matches no file (looked for " +
                                 replace_all(*m.pattern, "{covariate}", needed.names.front()) +
                                 " and the other covariates: " + needed.list() +
                                 "); check the folder names and that {covariate} stands for the model's covariate names"));
  std::vector<Tile> tiles;
  for (const std::string& id : ids) {
    Tile t{id, {}, {}};
    for (const std::string& c : needed.names)
      t.rasters.emplace_back(c, replace_all(replace_all(*m.pattern, "{covariate}", c), "{tile}", id));
    tiles.push_back(std::move(t));
  }
  return tiles;
}

Tile table_tile(const BatchManifest& m, const ManifestTile& entry, const Needed& needed) {
  std::map<std::string, std::string> given;
  for (std::size_t i = 0; i < entry.rasters.size(); ++i) {
    const auto& [name, path] = entry.rasters[i];
    if (!needed.has(name))
      throw InputError(located(m.path, entry.raster_lines[i],
                               "tile \"" + entry.id + "\" names covariate \"" + name + "\"" + needed.lacking()));
    given[name] = path;
  }
  Tile t{entry.id, {}, {}};
  for (const std::string& name : needed.names) {
    const auto it = given.find(name);
    if (it == given.end())
      throw InputError(located(m.path, entry.line, "tile \"" + entry.id + "\" has no raster for covariate \"" + name +
                                                       "\"; add " + name + " = \"PATH.tif\" to its [[tile]] entry"));
    t.rasters.emplace_back(name, it->second);
  }
  return t;
}

std::string pattern_path(const std::string& pattern, const std::string& covariate, const std::string& id) {
  return replace_all(replace_all(pattern, "{covariate}", covariate), "{tile}", id);
}

/// Gives every tile its rasters of scenario `sc`: from the [scenario.tiles] table where it lists the
/// tile, else from the pattern. Refuses, with the manifest's line, what cannot be one reading.
void add_scenario(const BatchManifest& m, const ManifestScenario& sc, const Needed& needed, std::vector<Tile>& tiles) {
  for (const std::string& c : sc.covariates)
    if (!needed.has(c))
      throw InputError(located(m.path, sc.covariates_line, "scenario \"" + sc.name + "\" replaces covariate \"" + c + "\"" +
                                                               needed.lacking()));
  std::map<std::string, const ManifestTile*> listed;
  for (const ManifestTile& entry : sc.tiles) {
    const bool known = std::any_of(tiles.begin(), tiles.end(), [&](const Tile& t) { return t.id == entry.id; });
    if (!known)
      throw InputError(located(m.path, entry.line, "scenario \"" + sc.name + "\" gives rasters for tile \"" + entry.id +
                                                       "\", which is not a tile of the region; check the id (tiles come "
                                                       "from [tiles] and [[tile]])"));
    if (sc.pattern)
      for (const std::string& c : sc.covariates)
        if (const std::string p = pattern_path(*sc.pattern, c, entry.id); fs::exists(p))
          throw InputError(located(m.path, entry.line,
                                   "scenario \"" + sc.name + "\": tile \"" + entry.id + "\" is given here and its pattern on line " +
                                       std::to_string(sc.pattern_line) + " also finds " + p +
                                       " for it; two readings of one raster: keep the entry or the file, not both"));
    listed.emplace(entry.id, &entry);
  }
  bool pattern_found = false;
  for (Tile& tile : tiles) {
    TileScenario ts{sc.name, {}};
    if (const auto it = listed.find(tile.id); it != listed.end()) {
      for (const std::string& c : sc.covariates)
        for (const auto& [covariate, path] : it->second->rasters)
          if (covariate == c) ts.rasters.emplace_back(c, path);
    } else if (sc.pattern) {
      for (const std::string& c : sc.covariates) {
        ts.rasters.emplace_back(c, pattern_path(*sc.pattern, c, tile.id));
        pattern_found = pattern_found || fs::exists(ts.rasters.back().second);
      }
    } else {
      throw InputError(located(m.path, sc.line, "scenario \"" + sc.name + "\" has no rasters for tile \"" + tile.id +
                                                    "\": add it to [scenario.tiles], or give the scenario a pattern"));
    }
    tile.scenarios.push_back(std::move(ts));
  }
  if (sc.pattern && !pattern_found)
    throw InputError(located(m.path, sc.pattern_line,
                             "scenario \"" + sc.name + "\": pattern \"" + sc.pattern_as_written + "\" finds no file for any tile " +
                                 (listed.empty() ? std::string() : std::string("it does not list in [scenario.tiles] ")) +
                                 "(looked for " + pattern_path(*sc.pattern, sc.covariates.front(), tiles.front().id) +
                                 ", ...); check the folder names and that {covariate} stands for the covariate names"));
}

}  // namespace

std::vector<std::string> glob_tile_ids(const std::string& pattern) {
  // Walk from the deepest folder that holds no placeholder, to the depth of the pattern only.
  const fs::path full(pattern);
  fs::path base;
  std::vector<std::string> rest;
  for (const fs::path& part : full) {
    if (rest.empty() && part.string().find("{tile}") == std::string::npos) base /= part;
    else rest.push_back(part.string());
  }
  std::vector<std::string> found;
  if (rest.empty()) return found;
  std::string tail;
  for (const std::string& part : rest) tail += (tail.empty() ? "" : "/") + part;
  const std::regex re = tail_regex(tail);
  const int depth = static_cast<int>(rest.size());
  std::error_code ec;
  // Tile folders are often symbolic links into a data store; follow them.
  fs::recursive_directory_iterator it(
      base, fs::directory_options::skip_permission_denied | fs::directory_options::follow_directory_symlink, ec);
  const fs::recursive_directory_iterator end;
  for (; !ec && it != end; it.increment(ec)) {
    if (it.depth() + 1 >= depth) it.disable_recursion_pending();
    if (it.depth() + 1 != depth) continue;
    std::smatch match;
    const std::string relative = it->path().lexically_relative(base).generic_string();
    if (std::regex_match(relative, match, re)) found.push_back(match[1].str());
  }
  std::sort(found.begin(), found.end());
  found.erase(std::unique(found.begin(), found.end()), found.end());
  return found;
}

std::vector<Tile> list_tiles(const BatchManifest& manifest, const ModelSpec& spec) {
  return list_tiles(manifest, std::vector<const ModelSpec*>{&spec});
}

std::vector<Tile> list_tiles(const BatchManifest& manifest, const std::vector<const ModelSpec*>& models) {
  const Needed needed(models);
  std::vector<Tile> tiles;
  std::map<std::string, std::string> origin;  // id -> where it came from, for duplicate messages
  if (manifest.pattern) {
    for (Tile& t : pattern_tiles(manifest, needed)) {
      origin[t.id] = "the pattern on line " + std::to_string(manifest.pattern_line);
      tiles.push_back(std::move(t));
    }
  }
  for (const ManifestTile& entry : manifest.tiles) {
    if (const auto it = origin.find(entry.id); it != origin.end())
      throw InputError(located(manifest.path, entry.line, "duplicate tile id \"" + entry.id + "\": " + it->second +
                                                              " already finds a tile of that id; rename one of them"));
    origin[entry.id] = "line " + std::to_string(entry.line);
    tiles.push_back(table_tile(manifest, entry, needed));
  }
  std::sort(tiles.begin(), tiles.end(), [](const Tile& a, const Tile& b) { return a.id < b.id; });
  for (const ManifestScenario& sc : manifest.scenarios) add_scenario(manifest, sc, needed, tiles);
  return tiles;
}

}  // namespace habcast
