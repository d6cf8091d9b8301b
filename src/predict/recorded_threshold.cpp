#include "predict/recorded_threshold.hpp"

#include <cmath>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "core/base/error.hpp"
#include "core/base/number_text.hpp"
#include "predict/prediction_report.hpp"
#include "raster/gdal_handles.hpp"
#include "raster/gdal_session.hpp"

namespace habcast {

namespace {

std::string read_whole_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path + ": cannot open; check the path and that it is readable");
  std::ostringstream buffer;
  buffer << in.rdbuf();
  return buffer.str();
}

double number_at(const nlohmann::json& j, const std::string& path, const std::string& where) {
  if (!j.contains("threshold") || !j["threshold"].is_number())
    throw InputError(path + ": " + where + " has no numeric \"threshold\"; is this the JSON of habcast evaluate --json?");
  const double v = j["threshold"].get<double>();
  if (!std::isfinite(v)) throw InputError(path + ": " + where + ".threshold is not a finite number");
  return v;
}

RecordedThreshold from_json(const std::string& path) {
  nlohmann::json j;
  try {
    j = nlohmann::json::parse(read_whole_file(path));
  } catch (const nlohmann::json::exception& e) {
    throw InputError(path + ": not valid JSON (" + e.what() + "); give the output of habcast evaluate --json");
  }
  if (j.contains("binary_map") && j["binary_map"].is_object())
    return {number_at(j["binary_map"], path, "binary_map"),
            "threshold of the binary map recorded by habcast evaluate in " + path};
  const bool fixed = j.contains("at_threshold") && j["at_threshold"].is_object();
  const bool best = j.contains("max_tss") && j["max_tss"].is_object();
  if (fixed && best) {
    const double a = number_at(j["at_threshold"], path, "at_threshold");
    const double b = number_at(j["max_tss"], path, "max_tss");
    if (a != b)
      throw UsageError(path + " records two thresholds: " + significant(a, 6) + " (given to evaluate with --threshold) and " +
                       significant(b, 6) + " (maximising TSS); choose one with --threshold");
    return {a, "threshold given to habcast evaluate, recorded in " + path};
  }
  if (fixed) return {number_at(j["at_threshold"], path, "at_threshold"), "threshold given to habcast evaluate, recorded in " + path};
  if (best) return {number_at(j["max_tss"], path, "max_tss"), "threshold maximising TSS, recorded by habcast evaluate in " + path};
  throw InputError(path + ": no threshold found (no binary_map, at_threshold or max_tss); give the output of "
                   "habcast evaluate --json, or --threshold T");
}

RecordedThreshold from_raster(const std::string& path) {
  ensure_gdal();
  DatasetPtr ds = open_input_raster(path);
  const char* value = ds->GetMetadataItem("HABCAST_THRESHOLD");
  if (!value)
    throw InputError(path + ": no HABCAST_THRESHOLD in its metadata; give a binary map written by habcast evaluate "
                     "--write-binary, its --json output, or --threshold T");
  char* end = nullptr;
  const double v = std::strtod(value, &end);
  if (end == value || *end != '\0' || !std::isfinite(v))
    throw InputError(path + ": HABCAST_THRESHOLD \"" + value + "\" is not a number");
  const char* rule = ds->GetMetadataItem("HABCAST_THRESHOLD_RULE");
  return {v, std::string(rule ? rule : "threshold") + " (recorded in " + path + ")"};
}

}  // namespace

RecordedThreshold read_recorded_threshold(const std::string& path) {
  const std::string ext = std::filesystem::path(path).extension().string();
  if (ext == ".json") return from_json(path);
  if (ext == ".tif" || ext == ".tiff") return from_raster(path);
  throw UsageError("--threshold-from " + path + ": give the JSON of habcast evaluate --json (.json) or the binary "
                   "map it wrote (.tif)");
}

/// The threshold of the classes: --threshold, --threshold-from or the scenario file's; two that
/// differ are ambiguous and refused, naming both.
std::optional<double> choose_threshold(std::optional<double> threshold, const std::string& threshold_from,
                                       const ScenarioSet& scenarios, std::string& source) {
  std::vector<std::pair<double, std::string>> given;
  if (threshold) given.emplace_back(*threshold, "--threshold");
  if (!threshold_from.empty()) {
    const RecordedThreshold r = read_recorded_threshold(threshold_from);
    given.emplace_back(r.value, r.rule);
  }
  if (scenarios.threshold) given.emplace_back(*scenarios.threshold, "scenario file " + scenarios.path);
  if (given.empty()) return std::nullopt;
  for (const auto& [value, from] : given)
    if (value != given.front().first)
      throw UsageError("two thresholds: " + format_value(given.front().first) + " (" + given.front().second + ") and " +
                       format_value(value) + " (" + from + "); give one of them");
  if (!std::isfinite(given.front().first)) throw UsageError("the threshold must be a finite number");
  source = given.front().second;
  return given.front().first;
}

}  // namespace habcast
