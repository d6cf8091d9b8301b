#include "batch/tile_record.hpp"

#include <sys/stat.h>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <stdexcept>

#include "batch/content_hash.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;
using json = nlohmann::ordered_json;

constexpr int kRecordVersion = 1;

json file_stamp(const std::string& covariate, const std::string& path) {
  struct stat st {};
  if (stat(path.c_str(), &st) != 0) return {{"covariate", covariate}, {"path", path}, {"missing", true}};
  const long long mtime_ns = static_cast<long long>(st.st_mtim.tv_sec) * 1000000000LL + st.st_mtim.tv_nsec;
  return {{"covariate", covariate}, {"path", path}, {"size", static_cast<long long>(st.st_size)}, {"mtime_ns", mtime_ns}};
}

const json& record_entry(const json& j, const char* key) {
  static const json none;
  return j.is_object() && j.contains(key) ? j[key] : none;
}

/// Which scenario differs, in words ("scenario ssp5: raster of tmin changed (...)").
std::string scenario_difference(const json& a, const json& b) {
  if (!a.is_array() || a.size() != b.size()) return "the scenarios changed (added, removed or reordered)";
  for (std::size_t i = 0; i < b.size(); ++i) {
    const std::string name = b[i].value("name", "?");
    if (record_entry(a[i], "name") != record_entry(b[i], "name")) return "the scenarios changed (added, removed or reordered)";
    if (record_entry(a[i], "description") != record_entry(b[i], "description") || record_entry(a[i], "covariates") != record_entry(b[i], "covariates"))
      return "scenario " + name + " was redefined";
    const json& ra = record_entry(a[i], "inputs");
    const json& rb = record_entry(b[i], "inputs");
    if (!ra.is_array() || ra.size() != rb.size()) return "scenario " + name + " was redefined";
    for (std::size_t k = 0; k < rb.size(); ++k)
      if (ra[k] != rb[k])
        return "scenario " + name + ": raster of " + rb[k].value("covariate", "?") + " changed (" + rb[k].value("path", "") + ")";
  }
  return "the scenarios changed";
}

/// Which part of the fingerprint differs, in words, for the summary ("input precip changed").
std::string difference(const json& old_fp, const json& new_fp) {
  if (old_fp.value("habcast_version", "") != new_fp.value("habcast_version", "")) return "habcast version changed";
  if (old_fp.value("model_hash", "") != new_fp.value("model_hash", "")) return "model file or training table changed";
  const json& oo = record_entry(old_fp, "options");
  const json& no = record_entry(new_fp, "options");
  if (record_entry(oo, "model_set") != record_entry(no, "model_set")) return "the model set (models, weights or average_se) changed";
  if (record_entry(oo, "threshold") != record_entry(no, "threshold")) return "the change classes' threshold changed";
  if (oo != no) return "predict options changed";
  const json& a = record_entry(old_fp, "inputs");
  const json& b = record_entry(new_fp, "inputs");
  if (!a.is_array() || a.size() != b.size()) return "covariates changed";
  for (std::size_t i = 0; i < b.size(); ++i)
    if (a[i] != b[i]) return "input " + b[i].value("covariate", "?") + " changed (" + b[i].value("path", "") + ")";
  if (record_entry(old_fp, "scenarios") != record_entry(new_fp, "scenarios"))
    return scenario_difference(record_entry(old_fp, "scenarios"), record_entry(new_fp, "scenarios"));
  return "record differs";
}

/// A recorded output name is a plain name in the tile folder or one of its sub-folders.
bool plain_output_name(const std::string& file) {
  const fs::path p(file);
  if (file.empty() || p.is_absolute()) return false;
  for (const fs::path& part : p)
    if (part == ".." || part == "." || part.empty()) return false;
  return true;
}

bool output_verifies(const std::string& tile_dir, const json& entry, std::string& why) {
  const std::string file = entry.value("file", "");
  if (!plain_output_name(file)) {
    why = "its record names an output outside the tile's folder (\"" + file + "\")";
    return false;
  }
  const fs::path path = fs::path(tile_dir) / file;
  std::error_code ec;
  const auto size = fs::file_size(path, ec);
  if (ec) {
    why = "output " + file + " is missing";
    return false;
  }
  if (static_cast<long long>(size) != entry.value("size", -1LL)) {
    why = "output " + file + " has a different size than recorded (truncated or replaced)";
    return false;
  }
  try {
    if (hex64(fnv1a64_file(path.string())) != entry.value("fnv1a64", "")) {
      why = "output " + file + " has different content than recorded (corrupt or edited)";
      return false;
    }
  } catch (const std::exception&) {
    why = "output " + file + " cannot be read";
    return false;
  }
  return true;
}

}  // namespace

json tile_fingerprint(const Tile& tile, const std::string& model_hash, const TileSettings& s,
                      const std::string& tool_version) {
  json inputs = json::array();
  for (const auto& [covariate, path] : tile.rasters) inputs.push_back(file_stamp(covariate, path));
  json options{{"level", s.level},
               {"block_size", s.block_size},
               {"creation_options", s.creation_options},
               {"overviews", s.overviews}};
  // Only when asked for, so that records of runs without units or alignment options stay valid.
  if (!s.units.is_null()) options["units"] = s.units;
  if (!s.model_set.is_null()) options["model_set"] = s.model_set;
  if (!s.threshold.is_null()) options["threshold"] = s.threshold;
  const AlignmentOptions& a = s.alignment;
  if (!a.target.covariate.empty() || !a.resampling.empty() || a.error_threshold != 0.0) {
    json methods = json::object();
    for (const auto& [name, method] : a.resampling) methods[name] = to_string(method);
    options["alignment"] = {{"grid_of", a.target.covariate}, {"resampling", methods}, {"warp_error", a.error_threshold}};
  }
  json fp{{"habcast_version", tool_version}, {"model_hash", model_hash}, {"options", options}, {"inputs", inputs}};
  if (!tile.scenarios.empty()) {
    // The definitions (name, description, covariates) are the manifest's; the rasters, this tile's.
    json scenarios = json::array();
    for (std::size_t i = 0; i < tile.scenarios.size(); ++i) {
      const TileScenario& ts = tile.scenarios[i];
      json entry = i < s.scenarios.size() ? s.scenarios[i] : json{{"name", ts.name}};
      json rasters = json::array();
      for (const auto& [covariate, path] : ts.rasters) rasters.push_back(file_stamp(covariate, path));
      entry["inputs"] = rasters;
      scenarios.push_back(entry);
    }
    fp["scenarios"] = scenarios;
  }
  return fp;
}

json input_stamp(const std::string& role, const std::string& path) { return file_stamp(role, path); }

json units_stamp(const std::string& path, const std::string& layer, const std::string& id, const std::string& threshold) {
  json j{{"file", file_stamp("units", path)}, {"layer", layer}, {"id", id}, {"threshold", threshold}};
  // A threshold read from an evaluate report changes with that file.
  struct stat st {};
  if (!threshold.empty() && stat(threshold.c_str(), &st) == 0) j["threshold_file"] = file_stamp("threshold", threshold);
  return j;
}

std::string model_fingerprint(const std::string& model_path, const std::string* training_path) {
  // Hash of the hashes, so the model and the table cannot trade bytes and collide.
  std::string both = hex64(fnv1a64_file(model_path));
  if (training_path) both += hex64(fnv1a64_file(*training_path));
  return hex64(fnv1a64(both));
}

std::string model_set_fingerprint(const std::vector<std::string>& model_hashes) {
  if (model_hashes.size() == 1) return model_hashes.front();
  std::string all;
  for (const std::string& h : model_hashes) all += h;
  return hex64(fnv1a64(all));
}

std::string tile_folder(const std::string& output_dir, const std::string& id) {
  return (fs::path(output_dir) / "tiles" / id).string();
}

std::string record_path(const std::string& tile_dir) { return (fs::path(tile_dir) / "tile-record.json").string(); }

json done_record(const std::string& id, const std::string& tile_dir, const json& fingerprint,
                 const std::vector<std::string>& outputs, double seconds) {
  json files = json::array();
  for (const std::string& path : outputs) {
    const std::string name = fs::path(path).lexically_normal().lexically_relative(fs::path(tile_dir).lexically_normal()).generic_string();
    if (!plain_output_name(name)) throw std::logic_error("done_record: " + path + " does not lie in " + tile_dir);
    files.push_back({{"file", name},
                     {"size", static_cast<long long>(fs::file_size(path))},
                     {"fnv1a64", hex64(fnv1a64_file(path))}});
  }
  return {{"habcast_tile_record", kRecordVersion}, {"tile", id},       {"status", "done"},
          {"elapsed_seconds", seconds},            {"outputs", files}, {"fingerprint", fingerprint}};
}

json failed_record(const std::string& id, const json& fingerprint, const std::string& error, int exit_code,
                   double seconds) {
  return {{"habcast_tile_record", kRecordVersion}, {"tile", id},           {"status", "failed"},
          {"elapsed_seconds", seconds},            {"error", error},       {"exit_code", exit_code},
          {"fingerprint", fingerprint}};
}

TileAssessment assess_tile(const std::string& tile_dir, const json& fingerprint) {
  TileAssessment a;
  std::ifstream in(record_path(tile_dir), std::ios::binary);
  if (!in) {
    a.reason = "not run yet (or interrupted)";
    return a;
  }
  try {
    a.record = json::parse(in);
  } catch (const json::exception&) {
    a.record = nullptr;
    a.reason = "its record is unreadable";
    return a;
  }
  if (!a.record.is_object() || a.record.value("habcast_tile_record", 0) != kRecordVersion ||
      !a.record.contains("fingerprint")) {
    a.reason = "its record is not a habcast tile record of this version";
    return a;
  }
  if (a.record.value("status", "") == "failed") {
    a.state = TileState::failed;
    a.reason = a.record.value("error", "failed");
    return a;
  }
  if (a.record["fingerprint"] != fingerprint) {
    a.state = TileState::changed;
    a.reason = difference(a.record["fingerprint"], fingerprint);
    return a;
  }
  const json& outputs = a.record["outputs"];
  if (!outputs.is_array() || outputs.empty()) {
    a.state = TileState::outputs_bad;
    a.reason = "its record lists no outputs";
    return a;
  }
  for (const json& entry : outputs) {
    if (!output_verifies(tile_dir, entry, a.reason)) {
      a.state = TileState::outputs_bad;
      return a;
    }
  }
  a.state = TileState::up_to_date;
  a.reason = "up to date";
  return a;
}

const char* to_string(TileState state) {
  switch (state) {
    case TileState::up_to_date: return "up_to_date";
    case TileState::no_record: return "not_run";
    case TileState::failed: return "failed";
    case TileState::changed: return "stale";
    case TileState::outputs_bad: return "outputs_bad";
  }
  return "?";
}

}  // namespace habcast
