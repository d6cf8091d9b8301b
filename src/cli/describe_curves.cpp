#include "cli/describe_curves.hpp"

#include <cmath>
#include <sstream>

#include "cli/describe_values.hpp"
#include "core/model/model_values.hpp"

namespace habcast::cli {

namespace {

using nlohmann::ordered_json;

/// JSON number, or null for NaN (no covariance, undefined term).
ordered_json number_or_null(double v) { return std::isfinite(v) ? ordered_json(v) : ordered_json(); }

}  // namespace

void beyond_second_order_warnings(const ModelSpec& spec, const NicheDescription& d, std::vector<std::string>& out) {
  for (const Covariate& c : spec.covariates) {
    for (const auto* def : {&c.natural_spline, &c.bspline}) {
      if (!*def) continue;
      const bool natural = (*def)->kind == SplineKind::natural;
      out.push_back(std::string("\"") + c.name + "\" enters through a " + (natural ? "natural spline" : "B-spline") +
                    ": beyond its boundary knots the basis is its own extension (" +
                    (natural ? "a straight line, as R's ns() continues it"
                             : "the polynomial of the last piece, as R's bs() continues it") +
                    "), which no data shaped. Predictions there are extrapolation by construction; predict flags "
                    "them as outside the training range.");
    }
  }
  if (d.numerical && d.numerical->at_hull_edge)
    out.push_back("The numerical optimum lies on the edge of the training hull: the response still rises beyond it, "
                  "so the best conditions may lie outside what the survey sampled.");
}

void add_beyond_second_order_json(const ModelSpec& spec, const NicheDescription& d, ordered_json& j) {
  j["beyond_second_order"] = d.beyond_second_order;
  j["canonical_note"] = d.canonical_note.empty() ? ordered_json() : ordered_json(d.canonical_note);
  if (!d.numerical) {
    j["numerical_optimum"] = d.beyond_second_order ? ordered_json({{"note", d.numerical_note}}) : ordered_json();
    return;
  }
  const NumericalOptimum& n = *d.numerical;
  ordered_json at = ordered_json::array();
  for (std::size_t i = 0; i < n.covariates.size(); ++i) {
    const Covariate& c = spec.covariates[static_cast<std::size_t>(n.covariates[i])];
    at.push_back({{"covariate", c.name}, {"raw", n.raw[i]}, {"units", c.units}, {"model", n.model[i]}});
  }
  j["numerical_optimum"] = {{"method", n.method},       {"point", at},
                            {"eta", n.eta},             {"eta_se", number_or_null(n.se_eta)},
                            {"response", n.mu},         {"lower", number_or_null(n.lower)},
                            {"upper", number_or_null(n.upper)}, {"at_hull_edge", n.at_hull_edge},
                            {"evaluations", n.evaluations}};
}

std::string beyond_second_order_text(const ModelSpec& spec, const NicheDescription& d) {
  if (!d.beyond_second_order) return {};
  std::ostringstream o;
  o << "Beyond second order (splines, term functions or higher powers)\n";
  if (!d.canonical_note.empty()) o << "  " << d.canonical_note << "\n";
  if (!d.numerical) {
    o << "  numerical optimum: not computed; " << d.numerical_note << "\n\n";
    return o.str();
  }
  const NumericalOptimum& n = *d.numerical;
  o << "  numerical optimum inside the training hull" << (n.at_hull_edge ? " (on its edge)" : "") << ":\n";
  for (std::size_t i = 0; i < n.covariates.size(); ++i) {
    const Covariate& c = spec.covariates[static_cast<std::size_t>(n.covariates[i])];
    o << "    " << c.name << " = " << with_units(n.raw[i], c.units) << "\n";
  }
  o << "    response " << num(n.mu);
  if (std::isfinite(n.lower)) o << " (" << num(n.lower) << " to " << num(n.upper) << ")";
  o << ", eta " << num(n.eta);
  if (std::isfinite(n.se_eta)) o << " +- " << num(n.se_eta);
  o << "\n  method: " << n.method << "\n\n";
  return o.str();
}

ordered_json curves_json(const ModelSpec& spec, const NicheDescription& d, const DescribeSettings& settings) {
  ordered_json j;
  j["model"] = {{"path", spec.path}, {"name", spec.name}, {"family", to_string(spec.family)},
                {"link", to_string(spec.link)}, {"response", response_description(spec)}};
  j["confidence"] = settings.canonical.confidence;
  j["band"] = "delta method on the link scale: inverse link of eta +- z se(eta)";
  ordered_json held = ordered_json::array();
  for (std::size_t c = 0; c < spec.covariates.size(); ++c) {
    const Covariate& cov = spec.covariates[c];
    const double v = d.reference.values[static_cast<Eigen::Index>(c)];
    ordered_json h = {{"covariate", cov.name}, {"source", d.reference.sources[c]}};
    if (cov.categorical) h["level"] = cov.levels[static_cast<std::size_t>(v)].name;
    else h["raw"] = raw_value(cov, v);
    held.push_back(h);
  }
  j["held_at"] = held;
  ordered_json curves = ordered_json::array();
  for (const ResponseCurve& curve : d.curves) {
    const Covariate& cov = spec.covariates[static_cast<std::size_t>(curve.covariate)];
    ordered_json c = {{"covariate", cov.name}, {"type", curve.categorical ? "categorical" : "continuous"},
                      {"units", cov.units}};
    ordered_json pts = ordered_json::array();
    for (std::size_t i = 0; i < curve.points.size(); ++i) {
      const CurvePoint& p = curve.points[i];
      ordered_json o;
      if (curve.categorical) {
        o["level"] = curve.labels[i];
        o["code"] = static_cast<std::int64_t>(p.raw);
        o["seen_in_training"] = static_cast<bool>(curve.level_seen[i]);
      } else {
        o["raw"] = p.raw;
        o["model"] = p.model;
        o["inside_training"] = p.inside_training;
      }
      o["eta"] = number_or_null(p.eta);
      o["se_eta"] = number_or_null(p.se_eta);
      o["response"] = number_or_null(p.mu);
      o["lower"] = number_or_null(p.lower);
      o["upper"] = number_or_null(p.upper);
      pts.push_back(o);
    }
    c["points"] = pts;
    if (!curve.categorical) {
      c["training_range"] = curve.training_min ? ordered_json::array({*curve.training_min, *curve.training_max}) : ordered_json();
      c["rug"] = curve.rug;
      ordered_json knots = ordered_json::array();
      for (const auto& [lo, hi] : curve.spline_boundaries) knots.push_back({lo, hi});
      c["spline_boundary_knots"] = knots;
    }
    curves.push_back(c);
  }
  j["curves"] = curves;
  return j;
}

}  // namespace habcast::cli
