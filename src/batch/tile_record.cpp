#include "batch/tile_record.hpp"

#include <sys/stat.h>

#include <filesystem>
#include <fstream>
#include <sstream>

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

/// Which part of the fingerprint differs, in words, for the summary ("input precip changed").
std::string difference(const json& old_fp, const json& new_fp) {
  if (old_fp.value("habcast_version", "") != new_fp.value("habcast_version", "")) return "habcast version changed";
  if (old_fp.value("model_hash", "") != new_fp.value("model_hash", "")) return "model file or training table changed";
  if (old_fp["options"] != new_fp["options"]) return "predict options changed";
  const json& a = old_fp["inputs"];
  const json& b = new_fp["inputs"];
  if (!a.is_array() || a.size() != b.size()) return "covariates changed";
  for (std::size_t i = 0; i < b.size(); ++i)
    if (a[i] != b[i]) return "input " + b[i].value("covariate", "?") + " changed (" + b[i].value("path", "") + ")";
  return "record differs";
}

bool output_verifies(const std::string& tile_dir, const json& entry, std::string& why) {
  const std::string file = entry.value("file", "");
  const fs::path path = fs::path(tile_dir) / file;
  std::error_code ec;
  const auto size = fs::file_size(path, ec);
  if (file.empty() || ec) {
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
  const AlignmentOptions& a = s.alignment;
  if (!a.target.covariate.empty() || !a.resampling.empty() || a.error_threshold != 0.0) {
    json methods = json::object();
    for (const auto& [name, method] : a.resampling) methods[name] = to_string(method);
    options["alignment"] = {{"grid_of", a.target.covariate}, {"resampling", methods}, {"warp_error", a.error_threshold}};
  }
  return {{"habcast_version", tool_version}, {"model_hash", model_hash}, {"options", options}, {"inputs", inputs}};
}

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

std::string tile_folder(const std::string& output_dir, const std::string& id) {
  return (fs::path(output_dir) / "tiles" / id).string();
}

std::string record_path(const std::string& tile_dir) { return (fs::path(tile_dir) / "tile-record.json").string(); }

json done_record(const std::string& id, const json& fingerprint, const std::vector<std::string>& outputs, double seconds) {
  json files = json::array();
  for (const std::string& path : outputs) {
    files.push_back({{"file", fs::path(path).filename().string()},
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
