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

std::string covariate_list(const ModelSpec& spec) {
  std::string s;
  for (const Covariate& c : spec.covariates) s += (s.empty() ? "" : ", ") + c.name;
  return s;
}

std::vector<Tile> pattern_tiles(const BatchManifest& m, const ModelSpec& spec) {
  std::set<std::string> ids;
  for (const Covariate& c : spec.covariates)
    for (const std::string& id : glob_tile_ids(replace_all(*m.pattern, "{covariate}", c.name))) ids.insert(id);
  ids.erase(".");
  ids.erase("..");
  if (ids.empty())
    throw InputError(located(m.path, m.pattern_line,
                             "pattern \"" + m.pattern_as_written + "\" matches no file (looked for " +
                                 replace_all(*m.pattern, "{covariate}", spec.covariates.front().name) +
                                 " and the other covariates: " + covariate_list(spec) +
                                 "); check the folder names and that {covariate} stands for the model's covariate names"));
  std::vector<Tile> tiles;
  for (const std::string& id : ids) {
    Tile t{id, {}};
    for (const Covariate& c : spec.covariates)
      t.rasters.emplace_back(c.name, replace_all(replace_all(*m.pattern, "{covariate}", c.name), "{tile}", id));
    tiles.push_back(std::move(t));
  }
  return tiles;
}

Tile table_tile(const BatchManifest& m, const ManifestTile& entry, const ModelSpec& spec) {
  std::map<std::string, std::string> given;
  for (std::size_t i = 0; i < entry.rasters.size(); ++i) {
    const auto& [name, path] = entry.rasters[i];
    if (spec.covariate_index(name) < 0)
      throw InputError(located(m.path, entry.raster_lines[i],
                               "tile \"" + entry.id + "\" names covariate \"" + name + "\", which the model " +
                                   spec.path + " does not have; its covariates are " + covariate_list(spec)));
    given[name] = path;
  }
  Tile t{entry.id, {}};
  for (const Covariate& c : spec.covariates) {
    const auto it = given.find(c.name);
    if (it == given.end())
      throw InputError(located(m.path, entry.line, "tile \"" + entry.id + "\" has no raster for covariate \"" + c.name +
                                                       "\"; add " + c.name + " = \"PATH.tif\" to its [[tile]] entry"));
    t.rasters.emplace_back(c.name, it->second);
  }
  return t;
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
  std::vector<Tile> tiles;
  std::map<std::string, std::string> origin;  // id -> where it came from, for duplicate messages
  if (manifest.pattern) {
    for (Tile& t : pattern_tiles(manifest, spec)) {
      origin[t.id] = "the pattern on line " + std::to_string(manifest.pattern_line);
      tiles.push_back(std::move(t));
    }
  }
  for (const ManifestTile& entry : manifest.tiles) {
    if (const auto it = origin.find(entry.id); it != origin.end())
      throw InputError(located(manifest.path, entry.line, "duplicate tile id \"" + entry.id + "\": " + it->second +
                                                              " already finds a tile of that id; rename one of them"));
    origin[entry.id] = "line " + std::to_string(entry.line);
    tiles.push_back(table_tile(manifest, entry, spec));
  }
  std::sort(tiles.begin(), tiles.end(), [](const Tile& a, const Tile& b) { return a.id < b.id; });
  return tiles;
}

}  // namespace habcast
