#pragma once
// A one-page picture of a scenario's change classes (change_class.tif, docs/scenarios.md): gain,
// loss, stable and not distinguishable in their colours, pixels where the baseline or the
// scenario is extrapolated hatched as in the prediction quicklook, a legend and a sampling note.
#include <string>

#include "render/figure.hpp"

namespace habcast {

/// Draws `class_path` (band 1, values of core/prediction/change_classes.hpp) under `title`;
/// `threshold_text` says at which suitability the classes were drawn. Throws InputError naming a
/// raster that cannot be read.
Figure change_class_figure(const std::string& class_path, const std::string& title, const std::string& threshold_text);

}  // namespace habcast
