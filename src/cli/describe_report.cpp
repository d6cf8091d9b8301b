#include "cli/describe_report.hpp"

#include <cmath>

#include "cli/describe_curves.hpp"
#include "cli/describe_values.hpp"
#include "core/model/link.hpp"
#include "core/model/model_values.hpp"

namespace habcast::cli {

namespace {

using nlohmann::ordered_json;

std::string analysed_names(const ModelSpec& spec, const QuadraticForm& form) {
  std::string s;
  for (int c : form.covariates) s += (s.empty() ? "" : " and ") + covariate_name(spec, c);
  return s;
}

void support_warnings(const ModelSpec& spec, const NicheDescription& d, std::vector<std::string>& out) {
  if (!d.support || d.support->inside) return;
  for (const CovariateSupport& s : d.support->covariates) {
    if (s.side == 0) continue;
    const Covariate& c = spec.covariates[static_cast<std::size_t>(s.covariate)];
    out.push_back("The optimum is an extrapolation: " + c.name + " = " + with_units(s.value, c.units) + " lies " +
                  (s.side < 0 ? "below the smallest" : "above the largest") + " training value (" +
                  with_units(s.side < 0 ? s.min : s.max, c.units) +
                  "). It is where the fitted quadratic shape peaks, not a place the survey shows to be best; "
                  "do not read it as an observed optimum.");
  }
}

void shape_warnings(const ModelSpec& spec, const NicheDescription& d, std::vector<std::string>& out) {
  if (!d.analysis) return;
  const CanonicalAnalysis& a = *d.analysis;
  const std::string names = analysed_names(spec, *d.form);
  switch (a.shape) {
    case SurfaceShape::peak:
      if (!peak_supported(a) && a.axes.front().eigenvalue_se)
        out.push_back("The peak in " + names +
                      " is weakly supported: at least one principal curvature is not distinguishable from zero at "
                      "this confidence level, so the data cannot rule out a ridge or a monotone trend in that direction.");
      break;
    case SurfaceShape::basin:
      out.push_back("The fitted surface in " + names +
                    " is a basin (a minimum), not a peak: suitability rises away from the stationary point in every "
                    "direction, so there is no optimum inside it.");
      break;
    case SurfaceShape::saddle:
      out.push_back("The fitted surface in " + names +
                    " is a saddle: a maximum along some principal axes and a minimum along others, so it has no "
                    "optimum; look at the conditional optima instead.");
      break;
    case SurfaceShape::ridge:
      out.push_back(std::string("The fitted surface in ") + names + " is a " +
                    (a.rising_ridge ? "rising ridge: along a flat principal axis the response keeps changing without "
                                      "bound, so there is no optimum."
                                    : "stationary ridge: a whole line of equally good points, so the optimum is not unique."));
      break;
  }
}

ordered_json axis_json(const ModelSpec& spec, const QuadraticForm& form, const CanonicalAnalysis& a, const PrincipalAxis& axis) {
  ordered_json j;
  j["eigenvalue"] = axis.eigenvalue;
  j["se"] = axis.eigenvalue_se ? ordered_json(*axis.eigenvalue_se) : ordered_json();
  j["z"] = axis.eigenvalue_se && *axis.eigenvalue_se > 0 ? ordered_json(axis.eigenvalue / *axis.eigenvalue_se) : ordered_json();
  j["distinguishable_from_zero"] = distinguishable(axis.eigenvalue, axis.eigenvalue_se, a.z);
  j["near_zero"] = axis.near_zero;
  ordered_json dir;
  for (std::size_t i = 0; i < form.covariates.size(); ++i)
    dir[covariate_name(spec, form.covariates[i])] = axis.direction[static_cast<Eigen::Index>(i)];
  j["direction"] = dir;
  if (axis.half_width) {
    j["half_width"] = *axis.half_width;
    ordered_json ends = ordered_json::array();
    for (double sign : {-1.0, 1.0}) {
      ordered_json e;
      for (std::size_t i = 0; i < form.covariates.size(); ++i) {
        const Eigen::Index k = static_cast<Eigen::Index>(i);
        const Covariate& c = spec.covariates[static_cast<std::size_t>(form.covariates[i])];
        e[c.name] = raw_value(c, a.stationary[k] + sign * *axis.half_width * axis.direction[k]);
      }
      ends.push_back(e);
    }
    j["breadth_ends_raw"] = ends;
  } else {
    j["half_width"] = nullptr;
  }
  return j;
}

ordered_json rotation_json(const ModelSpec& spec, const QuadraticForm& form, const CanonicalAnalysis& a, const PairRotation& r) {
  ordered_json j;
  j["covariates"] = {covariate_name(spec, form.covariates[static_cast<std::size_t>(r.first)]),
                     covariate_name(spec, form.covariates[static_cast<std::size_t>(r.second)])};
  j["tilt_degrees"] = degrees(r.tilt);
  j["major_axis_degrees"] = degrees(r.major_axis);
  j["se_degrees"] = r.se ? ordered_json(degrees(*r.se)) : ordered_json();
  j["z"] = r.se && *r.se > 0 ? ordered_json(r.tilt / *r.se) : ordered_json();
  j["distinguishable_from_zero"] = distinguishable(r.tilt, r.se, a.z);
  j["circular"] = r.circular;
  return j;
}

ordered_json canonical_json(const ModelSpec& spec, const QuadraticForm& form, const CanonicalAnalysis& a) {
  ordered_json j;
  j["shape"] = to_string(a.shape);
  if (a.shape == SurfaceShape::ridge) j["rising_ridge"] = a.rising_ridge;
  ordered_json point;
  for (std::size_t i = 0; i < form.covariates.size(); ++i) {
    const Covariate& c = spec.covariates[static_cast<std::size_t>(form.covariates[i])];
    const RawCoordinate r = raw_coordinate(c, a, static_cast<Eigen::Index>(i));
    ordered_json p;
    p["raw"] = r.raw;
    p["units"] = c.units;
    p["model"] = r.model;
    p["se_model"] = r.se_model ? ordered_json(*r.se_model) : ordered_json();
    p["se_raw"] = r.se_raw ? ordered_json(*r.se_raw) : ordered_json();
    p["lower_raw"] = r.lower_raw ? ordered_json(*r.lower_raw) : ordered_json();
    p["upper_raw"] = r.upper_raw ? ordered_json(*r.upper_raw) : ordered_json();
    point[c.name] = p;
  }
  j["stationary_point"] = point;
  j["eta"] = a.eta;
  j["eta_se"] = a.eta_se ? ordered_json(*a.eta_se) : ordered_json();
  j["response"] = a.response;
  j["response_se"] = a.eta_se ? ordered_json(link_inverse_derivative(spec.link, a.eta) * *a.eta_se) : ordered_json();
  j["peak_supported"] = peak_supported(a);
  j["axes"] = ordered_json::array();
  for (const PrincipalAxis& axis : a.axes) j["axes"].push_back(axis_json(spec, form, a, axis));
  j["rotations"] = ordered_json::array();
  for (const PairRotation& r : a.rotations) j["rotations"].push_back(rotation_json(spec, form, a, r));
  return j;
}

ordered_json form_json(const ModelSpec& spec, const QuadraticForm& form) {
  ordered_json j;
  ordered_json names = ordered_json::array();
  for (int c : form.covariates) names.push_back(covariate_name(spec, c));
  j["covariates"] = names;
  j["units"] = "model (transformed and standardised)";
  j["constant"] = form.constant;
  j["b"] = std::vector<double>(form.b.data(), form.b.data() + form.b.size());
  ordered_json B = ordered_json::array();
  for (Eigen::Index r = 0; r < form.B.rows(); ++r) {
    std::vector<double> row;
    for (Eigen::Index c = 0; c < form.B.cols(); ++c) row.push_back(form.B(r, c));
    B.push_back(row);
  }
  j["B"] = B;
  return j;
}

ordered_json conditional_json(const ModelSpec& spec, int target, int given, const ConditionalOptimum& c) {
  const Covariate& t = spec.covariates[static_cast<std::size_t>(target)];
  const Covariate& g = spec.covariates[static_cast<std::size_t>(given)];
  ordered_json j;
  j["target"] = t.name;
  j["given"] = g.name;
  j["defined"] = c.defined;
  if (!c.defined) return j;
  j["kind"] = c.maximum ? "maximum" : "minimum";
  j["intercept_model"] = c.intercept;
  j["slope_model"] = c.slope;
  j["slope_se_model"] = c.slope_se ? ordered_json(*c.slope_se) : ordered_json();
  const TransformedLine line = transformed_line(t, g, c);
  j["intercept"] = line.intercept;
  j["slope"] = line.slope;
  j["formula"] = line.formula;
  return j;
}

ordered_json pair_json(const ModelSpec& spec, const PairDescription& p) {
  ordered_json j;
  j["covariates"] = {covariate_name(spec, p.first), covariate_name(spec, p.second)};
  j["shape"] = to_string(p.analysis.shape);
  ordered_json point;
  if (p.analysis.shape != SurfaceShape::ridge)
    for (Eigen::Index i = 0; i < 2; ++i) {
      const Covariate& c = spec.covariates[static_cast<std::size_t>(i == 0 ? p.first : p.second)];
      point[c.name] = raw_value(c, p.analysis.stationary[i]);
    }
  j["stationary_point_raw"] = point;
  j["inside_training_hull"] = p.stationary_inside_hull ? ordered_json(*p.stationary_inside_hull) : ordered_json();
  j["training_hull_vertices"] = p.hull.size();
  j["rotation"] = rotation_json(spec, p.form, p.analysis, p.analysis.rotations.front());
  j["conditional_optima"] = {conditional_json(spec, p.first, p.second, p.first_given_second),
                             conditional_json(spec, p.second, p.first, p.second_given_first)};
  return j;
}

ordered_json reference_json(const ModelSpec& spec, const NicheDescription& d) {
  ordered_json j;
  for (std::size_t c = 0; c < spec.covariates.size(); ++c) {
    const Covariate& cov = spec.covariates[c];
    const double v = d.reference.values[static_cast<Eigen::Index>(c)];
    ordered_json r;
    if (cov.categorical) {
      r["level"] = cov.levels[static_cast<std::size_t>(v)].name;
      r["code"] = cov.levels[static_cast<std::size_t>(v)].code;
    } else {
      r["raw"] = raw_value(cov, v);
      r["units"] = cov.units;
      r["model"] = v;
    }
    r["source"] = d.reference.sources[c];
    j[cov.name] = r;
  }
  return j;
}

}  // namespace

std::vector<std::string> describe_warnings(const ModelSpec& spec, const NicheDescription& d, const DescribeSettings& settings) {
  (void)settings;
  std::vector<std::string> out;
  if (!d.form && !d.beyond_second_order)
    out.push_back("No continuous covariate has a squared or product term, so the fitted response is monotone in each: "
                  "there is no optimum to describe.");
  shape_warnings(spec, d, out);
  support_warnings(spec, d, out);
  if (d.support && d.support->inside && d.pair && d.pair->stationary_inside_hull == false && d.form &&
      d.form->covariates.size() == 2)
    out.push_back("The optimum lies inside the training range of each covariate but outside the training hull of " +
                  covariate_name(spec, d.pair->first) + " and " + covariate_name(spec, d.pair->second) +
                  ": no survey site had that combination, so it is an extrapolation.");
  beyond_second_order_warnings(spec, d, out);
  if (!d.has_samples)
    out.push_back("The model file names no training samples: covariates are held at the model's centre, and the "
                  "optimum cannot be checked against the training data.");
  if (!spec.covariance)
    out.push_back("The model file has no covariance matrix: no standard errors, and no test of whether the optimum "
                  "or the tilt differ from zero.");
  return out;
}

nlohmann::ordered_json describe_json(const ModelSpec& spec, const NicheDescription& d, const DescribeSettings& settings,
                                     const std::vector<std::string>& warnings) {
  ordered_json j;
  j["model"] = {{"path", spec.path}, {"name", spec.name}, {"family", to_string(spec.family)}, {"link", to_string(spec.link)},
                {"response", spec.response}};
  j["settings"] = {{"fraction", settings.canonical.fraction},
                   {"confidence", settings.canonical.confidence},
                   {"ridge_tolerance", settings.canonical.ridge_tolerance}};
  j["reference"] = reference_json(spec, d);
  ordered_json linear = ordered_json::array();
  for (const LinearEffect& e : d.linear) {
    const Covariate& c = spec.covariates[static_cast<std::size_t>(e.covariate)];
    linear.push_back({{"covariate", c.name}, {"gradient_per_model_unit", e.gradient},
                      {"model_unit", c.scale}, {"transform", to_string(c.transform)}});
  }
  j["linear_only"] = linear;
  ordered_json through = ordered_json::array();
  for (int c : d.through_function) through.push_back(covariate_name(spec, c));
  j["not_analysed"] = through;
  j["quadratic_form"] = d.form ? form_json(spec, *d.form) : ordered_json();
  j["canonical"] = d.analysis ? canonical_json(spec, *d.form, *d.analysis) : ordered_json();
  if (d.support) {
    ordered_json s;
    s["method"] = d.support->method;
    s["inside"] = d.support->inside;
    ordered_json cs = ordered_json::array();
    for (const CovariateSupport& c : d.support->covariates)
      cs.push_back({{"covariate", covariate_name(spec, c.covariate)}, {"value", c.value}, {"min", c.min}, {"max", c.max},
                    {"position", c.side < 0 ? "below" : (c.side > 0 ? "above" : "inside")}});
    s["covariates"] = cs;
    j["training_support"] = s;
  } else {
    j["training_support"] = nullptr;
  }
  j["pair"] = d.pair ? pair_json(spec, *d.pair) : ordered_json();
  add_beyond_second_order_json(spec, d, j);
  j["warnings"] = warnings;
  return j;
}

}  // namespace habcast::cli
