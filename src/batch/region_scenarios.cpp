#include "batch/region_scenarios.hpp"

#include <cstdint>
#include <map>

namespace habcast {

namespace {

using json = nlohmann::ordered_json;

const json& scenario_entry(const json& j, const char* key) {
  static const json none;
  return j.is_object() && j.contains(key) ? j[key] : none;
}

/// A count or area added over tiles; known only while every tile gave it.
template <typename T>
struct Total {
  T sum{};
  bool known = true;
  bool any = false;
  void add(const json& v) {
    any = true;
    if (v.is_number()) sum += v.get<T>();
    else known = false;
  }
  [[nodiscard]] bool complete() const { return any && known; }
  [[nodiscard]] json value() const { return complete() ? json(sum) : json(); }
};
using Count = Total<std::int64_t>;
using Area = Total<double>;

json share_of(const Count& part, const Count& whole) {
  if (!part.complete() || !whole.complete()) return json();
  return whole.sum > 0 ? static_cast<double>(part.sum) / static_cast<double>(whole.sum) : 0.0;
}

/// Pixels, share of `whole`, and area of one item (a class, an interval side).
struct Item {
  Count pixels, extrapolated;
  Area area_ha;
  void add(const json& j) {
    pixels.add(scenario_entry(j, "pixels"));
    extrapolated.add(scenario_entry(j, "extrapolated_pixels"));
    area_ha.add(scenario_entry(j, "area_ha"));
  }
  [[nodiscard]] json to_json(const Count& whole, bool with_extrapolated) const {
    json j{{"pixels", pixels.value()}, {"share", share_of(pixels, whole)}, {"area_ha", area_ha.value()}};
    if (with_extrapolated) {
      j["extrapolated_pixels"] = extrapolated.value();
      j["extrapolated_share"] = share_of(extrapolated, pixels);
    }
    return j;
  }
};

/// Checked and flagged pixels, per cause where the tiles give causes.
struct Extrapolation {
  Count checked, flagged;
  std::map<std::string, Count> causes;
  std::vector<std::string> cause_order;
  bool seen = false;
  void add(const json& e) {
    seen = true;
    checked.add(scenario_entry(e, "checked_pixels"));
    flagged.add(scenario_entry(e, "flagged_pixels"));
    const json& c = scenario_entry(e, "causes");
    if (c.is_object()) {
      for (const auto& [name, v] : c.items()) {
        if (!causes.count(name)) cause_order.push_back(name);
        causes[name].add(scenario_entry(v, "pixels"));
      }
    } else {
      for (auto& [name, count] : causes) count.known = false;
      cause_order.clear();
    }
  }
  [[nodiscard]] json to_json() const {
    if (!seen || !checked.complete()) return json();
    json j{{"checked_pixels", checked.value()}, {"flagged_pixels", flagged.value()}, {"flagged_share", share_of(flagged, checked)}};
    if (!cause_order.empty()) {
      json c = json::object();
      for (const std::string& name : cause_order) {
        const Count& n = causes.at(name);
        c[name] = {{"pixels", n.value()}, {"share", share_of(n, checked)}};
      }
      j["causes"] = c;
    }
    return j;
  }
};

struct ScenarioTotals {
  std::string description;
  Count compared, one_side_only, predicted;
  double change_sum = 0.0;  ///< mean change x compared pixels, so means combine as sums
  Item above, below;
  std::map<std::string, Item> classes;
  std::vector<std::string> class_order;
  bool with_classes = true;
  bool class_extrapolation = true;
  Extrapolation extrapolation;
};

/// A tile's interval counts: one model writes {"pixels": n, ...}, a model set "..._pixels": n.
json interval(const json& s, const char* key) {
  const json& j = scenario_entry(s, key);
  if (j.is_object()) return j;
  return json{{"pixels", scenario_entry(s, (std::string(key) + "_pixels").c_str())}};
}

}  // namespace

json merge_region_scenarios(const std::vector<std::string>& names, const std::vector<TileScenarioReport>& tiles,
                            int tiles_total) {
  std::vector<ScenarioTotals> totals(names.size());
  Count baseline_predicted;
  Extrapolation baseline;
  json threshold;
  std::vector<std::string> not_merged;
  int merged = 0;
  for (const TileScenarioReport& t : tiles) {
    const json& list = scenario_entry(t.report, "scenarios");
    if (!list.is_array()) {
      not_merged.push_back(t.tile);
      continue;
    }
    ++merged;
    if (threshold.is_null()) threshold = scenario_entry(t.report, "threshold");
    baseline_predicted.add(scenario_entry(scenario_entry(t.report, "baseline"), "predicted_pixels"));
    baseline.add(scenario_entry(scenario_entry(t.report, "baseline"), "extrapolation"));
    for (std::size_t i = 0; i < names.size(); ++i) {
      ScenarioTotals& sc = totals[i];
      json entry;
      for (const json& e : list)
        if (e.is_object() && e.value("name", "") == names[i]) entry = e;
      if (entry.is_object()) sc.description = entry.value("description", sc.description);
      sc.compared.add(scenario_entry(entry, "compared_pixels"));
      sc.one_side_only.add(scenario_entry(entry, "one_side_only_pixels"));
      sc.predicted.add(scenario_entry(entry, "predicted_pixels"));
      const json& mean = scenario_entry(entry, "mean_change");
      if (mean.is_number() && scenario_entry(entry, "compared_pixels").is_number())
        sc.change_sum += mean.get<double>() * scenario_entry(entry, "compared_pixels").get<double>();
      sc.above.add(interval(entry, "interval_above_zero"));
      sc.below.add(interval(entry, "interval_below_zero"));
      const json& classes = scenario_entry(entry, "classes");
      if (!classes.is_object()) {
        sc.with_classes = false;
      } else {
        for (const auto& [key, v] : classes.items()) {
          if (!sc.classes.count(key)) sc.class_order.push_back(key);
          sc.classes[key].add(v);
          sc.class_extrapolation = sc.class_extrapolation && v.contains("extrapolated_pixels");
        }
      }
      sc.extrapolation.add(scenario_entry(entry, "extrapolation"));
    }
  }

  json out;
  out["tiles_merged"] = merged;
  out["tiles_total"] = tiles_total;
  if (!not_merged.empty()) out["tiles_without_readable_scenarios_json"] = not_merged;
  out["rule"] = "pixel counts and areas are the sums over the merged tiles; every share is recomputed from those sums";
  out["threshold"] = threshold;
  out["baseline"] = {{"predicted_pixels", baseline_predicted.value()}, {"extrapolation", baseline.to_json()}};
  json list = json::array();
  for (std::size_t i = 0; i < names.size(); ++i) {
    const ScenarioTotals& sc = totals[i];
    json j;
    j["name"] = names[i];
    j["description"] = sc.description;
    j["predicted_pixels"] = sc.predicted.value();
    j["compared_pixels"] = sc.compared.value();
    j["one_side_only_pixels"] = sc.one_side_only.value();
    j["mean_change"] = sc.compared.complete() && sc.compared.sum > 0
                           ? json(sc.change_sum / static_cast<double>(sc.compared.sum))
                           : json();
    j["interval_above_zero"] = sc.above.to_json(sc.compared, false);
    j["interval_below_zero"] = sc.below.to_json(sc.compared, false);
    if (sc.with_classes && !sc.class_order.empty()) {
      json classes = json::object();
      for (const std::string& key : sc.class_order)
        classes[key] = sc.classes.at(key).to_json(sc.compared, sc.class_extrapolation);
      j["classes"] = classes;
    } else {
      j["classes"] = json();
    }
    json e = sc.extrapolation.to_json();
    if (e.is_object()) e["baseline_flagged_share"] = share_of(baseline.flagged, baseline.checked);
    j["extrapolation"] = e;
    list.push_back(j);
  }
  out["list"] = list;
  return out;
}

}  // namespace habcast
