#pragma once
// The threshold `habcast evaluate` recorded, for classifying a change: from its JSON report
// (`evaluate --json > eval.json`) or from the binary map it wrote (`--write-binary`, whose metadata
// keeps HABCAST_THRESHOLD).
#include <optional>
#include <string>

#include "predict/scenario_set.hpp"

namespace habcast {

struct RecordedThreshold {
  double value = 0.0;
  std::string rule;  ///< how evaluate chose it, for the report
};

/// Reads FILE.json or FILE.tif. In a JSON report, the binary map's threshold when one was written;
/// else the threshold given to evaluate with --threshold, or the max-TSS one; a report holding
/// two different thresholds and no map is ambiguous and refused, naming both.
RecordedThreshold read_recorded_threshold(const std::string& path);

/// The threshold of the change classes: --threshold, --threshold-from FILE or the scenario file's
/// `threshold`; none of them: no classes. Sources that disagree are refused, naming both;
/// `source` says which was used.
std::optional<double> choose_threshold(std::optional<double> threshold, const std::string& threshold_from,
                                       const ScenarioSet& scenarios, std::string& source);

}  // namespace habcast
