#pragma once
// describe's account of models beyond second order (splines, term functions, higher powers): the
// numerical optimum inside the training hull, the note on what the canonical analysis covers, the
// spline warnings, and the response curves as JSON. Kept apart from describe_report so the
// quadratic report stays as it was.
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"
#include "core/niche/niche_description.hpp"

namespace habcast::cli {

/// Warnings for spline terms (extrapolation by construction beyond the boundary knots) and for an
/// optimum at the edge of the training hull.
void beyond_second_order_warnings(const ModelSpec& spec, const NicheDescription& d, std::vector<std::string>& out);

/// `numerical_optimum` and `canonical_note` of the describe JSON (null when not applicable).
void add_beyond_second_order_json(const ModelSpec& spec, const NicheDescription& d, nlohmann::ordered_json& j);

/// The text section "Numerical optimum" (empty for second-order models).
std::string beyond_second_order_text(const ModelSpec& spec, const NicheDescription& d);

/// Every curve of d.curves: per covariate its points (raw, model, eta, se_eta, response, lower,
/// upper, inside_training), training range, rug, spline boundary knots; categorical: levels.
nlohmann::ordered_json curves_json(const ModelSpec& spec, const NicheDescription& d, const DescribeSettings& settings);

}  // namespace habcast::cli
