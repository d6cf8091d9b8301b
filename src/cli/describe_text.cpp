// The readable form of `habcast describe`: short sections, each number with its unit and, where
// the model has a covariance matrix, its standard error and whether it differs from zero.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>

#include "cli/describe_curves.hpp"
#include "cli/describe_report.hpp"
#include "cli/describe_values.hpp"
#include "core/model/link.hpp"
#include "core/model/model_values.hpp"

namespace habcast::cli {

namespace {

std::string pad(const std::string& s, std::size_t width) { return s.size() >= width ? s + " " : s + std::string(width - s.size(), ' '); }

std::string percent(double level) {
  char buf[16];
  std::snprintf(buf, sizeof buf, "%g %%", 100.0 * level);
  return buf;
}

std::string response_words(const ModelSpec& spec) {
  switch (spec.family) {
    case Family::binomial: return "probability";
    case Family::poisson: return "expected count";
    case Family::gaussian: return "mean";
  }
  return "response";
}

void header(std::ostream& o, const ModelSpec& spec) {
  o << (spec.name.empty() ? spec.path : spec.name) << "\n";
  o << to_string(spec.family) << " model, " << to_string(spec.link) << " link";
  if (!spec.response.empty()) o << ", response \"" << spec.response << "\"";
  o << "\n\n";
}

void held(std::ostream& o, const ModelSpec& spec, const NicheDescription& d) {
  std::ostringstream rows;
  for (std::size_t c = 0; c < spec.covariates.size(); ++c) {
    const int ci = static_cast<int>(c);
    const bool analysed = d.form && std::find(d.form->covariates.begin(), d.form->covariates.end(), ci) != d.form->covariates.end();
    if (analysed) continue;
    const Covariate& cov = spec.covariates[c];
    const double v = d.reference.values[static_cast<Eigen::Index>(c)];
    const std::string value = cov.categorical ? cov.levels[static_cast<std::size_t>(v)].name : with_units(raw_value(cov, v), cov.units);
    rows << "  " << pad(cov.name, 14) << pad(value, 18) << "(" << d.reference.sources[c] << ")\n";
  }
  if (rows.str().empty()) return;
  o << "Held fixed while the others vary\n" << rows.str() << "\n";
}

std::string shape_sentence(const CanonicalAnalysis& a) {
  switch (a.shape) {
    case SurfaceShape::peak: return "a peak: the response falls away from one optimum in every direction";
    case SurfaceShape::basin: return "a basin: one minimum, the response rises in every direction";
    case SurfaceShape::saddle: return "a saddle: a maximum along some axes and a minimum along others";
    case SurfaceShape::ridge:
      return a.rising_ridge ? "a rising ridge: no optimum, the response keeps changing along a flat axis"
                            : "a stationary ridge: a line of equally good points";
  }
  return "";
}

std::string numbers(const Eigen::RowVectorXd& v) {
  std::string s;
  for (Eigen::Index i = 0; i < v.size(); ++i) s += (i ? ", " : "") + num(v[i]);
  return s;
}

void quadratic_form(std::ostream& o, const QuadraticForm& form) {
  std::string B;
  for (Eigen::Index r = 0; r < form.B.rows(); ++r) B += (r ? ", [" : "[") + numbers(form.B.row(r)) + "]";
  o << "Linear predictor, x in model units ((transform(raw) - center) / scale):\n"
    << "  eta = c + b'x + x'Bx,  c = " << num(form.constant) << ",  b = (" << numbers(form.b.transpose()) << "),  B = ["
    << B << "]\n\n";
}

void stationary(std::ostream& o, const ModelSpec& spec, const NicheDescription& d, const DescribeSettings& settings) {
  const QuadraticForm& form = *d.form;
  const CanonicalAnalysis& a = *d.analysis;
  const bool se = a.stationary_covariance.has_value();
  if (a.shape == SurfaceShape::ridge)
    o << "Point of the ridge nearest the model centre (there is no single stationary point)\n";
  else
    o << (a.shape == SurfaceShape::peak ? "Optimum" : "Stationary point") << " (where every slope of the linear predictor is zero)\n";
  o << "  " << pad("", 14) << pad("value", 20) << pad("model units", 20);
  if (se) o << pad(percent(settings.canonical.confidence) + " interval", 26);
  if (d.support) o << "training range";
  o << "\n";
  for (std::size_t i = 0; i < form.covariates.size(); ++i) {
    const Covariate& c = spec.covariates[static_cast<std::size_t>(form.covariates[i])];
    const RawCoordinate r = raw_coordinate(c, a, static_cast<Eigen::Index>(i));
    std::string model = num(r.model);
    if (r.se_model) model += " +- " + num(*r.se_model);
    o << "  " << pad(c.name, 14) << pad(with_units(r.raw, c.units), 20) << pad(model, 20);
    if (r.lower_raw) o << pad(num(*r.lower_raw) + " to " + num(*r.upper_raw), 26);
    if (d.support) {
      const CovariateSupport& s = d.support->covariates[i];
      o << num(s.min) << " to " << num(s.max) << (s.side == 0 ? "  inside" : (s.side < 0 ? "  BELOW" : "  ABOVE"));
    }
    o << "\n";
  }
  for (std::size_t i = 0; i < form.covariates.size(); ++i) {
    const Covariate& c = spec.covariates[static_cast<std::size_t>(form.covariates[i])];
    if (c.transform == Transform::none) continue;
    o << "  " << c.name << " enters the model as " << transformed_name(c) << ": its value here is the inverse, "
      << (c.transform == Transform::log ? "exp" : (c.transform == Transform::log1p ? "expm1" : "square"))
      << "(" << num(c.center) << " + " << num(c.scale) << " * model value), and its interval is mapped the same way, "
      << "so it is not symmetric.\n";
  }
  o << "  Linear predictor there: " << num(a.eta);
  if (a.eta_se) o << " +- " << num(*a.eta_se);
  o << " (" << to_string(spec.link) << " scale); " << response_words(spec) << " " << num(a.response);
  if (a.eta_se) o << " +- " << num(link_inverse_derivative(spec.link, a.eta) * *a.eta_se);
  o << "\n";
  o << "\n";
}

void axes(std::ostream& o, const ModelSpec& spec, const NicheDescription& d, const DescribeSettings& settings) {
  const QuadraticForm& form = *d.form;
  const CanonicalAnalysis& a = *d.analysis;
  o << "Principal axes (eigenvectors of B; curvature of the linear predictor per model unit squared)\n";
  std::string names;
  for (int c : form.covariates) names += (names.empty() ? "" : ", ") + covariate_name(spec, c);
  o << "  axis  " << pad("curvature", 22) << pad("direction (" + names + ")", 30);
  if (a.shape == SurfaceShape::peak) o << "half-width to " << percent(settings.canonical.fraction) << " of the peak";
  o << "\n";
  for (std::size_t k = 0; k < a.axes.size(); ++k) {
    const PrincipalAxis& axis = a.axes[k];
    std::string curvature = num(axis.eigenvalue);
    if (axis.eigenvalue_se) curvature += " +- " + num(*axis.eigenvalue_se) + (distinguishable(axis.eigenvalue, axis.eigenvalue_se, a.z) ? "" : " (~0)");
    if (axis.near_zero) curvature += " (flat)";
    std::string dir = "(";
    for (Eigen::Index i = 0; i < axis.direction.size(); ++i) dir += (i ? ", " : "") + num(axis.direction[i]);
    dir += ")";
    o << "  " << pad(std::to_string(k + 1), 6) << pad(curvature, 22) << pad(dir, 30);
    if (axis.half_width) o << num(*axis.half_width) << " model units";
    o << "\n";
  }
  bool any_flat = false;
  for (const PrincipalAxis& axis : a.axes) any_flat = any_flat || (axis.eigenvalue_se && !distinguishable(axis.eigenvalue, axis.eigenvalue_se, a.z));
  if (any_flat)
    o << "  (~0): the curvature is not distinguishable from zero at the " << percent(settings.canonical.confidence)
      << " level.\n";
  if (a.shape == SurfaceShape::peak && a.axes.front().half_width) {
    o << "  Niche breadth: along each axis the " << response_words(spec) << " falls to " << percent(settings.canonical.fraction)
      << " of its peak at these ends:\n";
    for (std::size_t k = 0; k < a.axes.size(); ++k) {
      const PrincipalAxis& axis = a.axes[k];
      std::string ends[2];
      for (int s = 0; s < 2; ++s) {
        const double sign = s == 0 ? -1.0 : 1.0;
        for (std::size_t i = 0; i < form.covariates.size(); ++i) {
          const Eigen::Index ii = static_cast<Eigen::Index>(i);
          const Covariate& c = spec.covariates[static_cast<std::size_t>(form.covariates[i])];
          ends[s] += (i ? ", " : "") + c.name + " " + with_units(raw_value(c, a.stationary[ii] + sign * *axis.half_width * axis.direction[ii]), c.units);
        }
      }
      o << "    axis " << k + 1 << ": " << ends[0] << "  <->  " << ends[1] << "\n";
    }
  }
  o << "\n";
}

void rotations(std::ostream& o, const ModelSpec& spec, const NicheDescription& d, const DescribeSettings& settings) {
  const CanonicalAnalysis& a = *d.analysis;
  if (a.rotations.empty()) return;
  o << "Tilt of the contours (from the product terms; angles in standardised units)\n";
  for (const PairRotation& r : a.rotations) {
    const std::string x = covariate_name(spec, d.form->covariates[static_cast<std::size_t>(r.first)]);
    const std::string y = covariate_name(spec, d.form->covariates[static_cast<std::size_t>(r.second)]);
    o << "  " << pad(x + " x " + y, 22);
    if (r.circular) {
      o << "no tilt: circular contours, every direction is a principal axis\n";
      continue;
    }
    o << num(degrees(r.tilt)) << " deg";
    if (r.se) o << " +- " << num(degrees(*r.se)) << " deg";
    if (r.tilt == 0.0) o << ": no interaction, the axes follow the covariates";
    else if (r.se) o << (distinguishable(r.tilt, r.se, a.z) ? ": distinguishable from zero" : ": not distinguishable from zero") << " at the " << percent(settings.canonical.confidence) << " level";
    o << "\n";
    if (a.shape == SurfaceShape::peak && r.tilt != 0.0)
      o << "  " << pad("", 22) << "the long axis points " << num(degrees(r.major_axis)) << " deg from the " << x << " axis towards " << y << "\n";
  }
  o << "\n";
}

void pair_section(std::ostream& o, const ModelSpec& spec, const NicheDescription& d) {
  const PairDescription& p = *d.pair;
  const Covariate& cx = spec.covariates[static_cast<std::size_t>(p.first)];
  const Covariate& cy = spec.covariates[static_cast<std::size_t>(p.second)];
  o << "Conditional optima in " << cx.name << " and " << cy.name << "\n";
  const std::pair<const ConditionalOptimum*, std::pair<const Covariate*, const Covariate*>> lines[2] = {
      {&p.first_given_second, {&cx, &cy}}, {&p.second_given_first, {&cy, &cx}}};
  for (const auto& [c, covs] : lines) {
    const auto [target, given] = covs;
    if (!c->defined) {
      o << "  " << target->name << " has no squared term: no optimum for a fixed " << given->name << "\n";
      continue;
    }
    const TransformedLine line = transformed_line(*target, *given, *c);
    o << "  " << (c->maximum ? "best " : "lowest ") << target->name << " for a given " << given->name << ":  " << line.formula;
    if (c->slope_se) o << "   (slope +- " << num(*c->slope_se * target->scale / given->scale) << ")";
    o << "\n";
  }
  if (p.hull.size() >= 3 && p.stationary_inside_hull)
    o << "  The stationary point of this plane lies " << (*p.stationary_inside_hull ? "inside" : "OUTSIDE")
      << " the convex hull of the " << p.training.size() << " training sites.\n";
  o << "\n";
}

void linear(std::ostream& o, const ModelSpec& spec, const NicheDescription& d) {
  if (d.linear.empty() && d.through_function.empty()) return;
  o << "Covariates without an optimum (held at the values above)\n";
  for (const LinearEffect& e : d.linear) {
    const Covariate& c = spec.covariates[static_cast<std::size_t>(e.covariate)];
    o << "  " << pad(c.name, 14) << "linear: the linear predictor changes by " << num(e.gradient) << " per "
      << with_units(c.scale, c.units) << (c.transform == Transform::none ? "" : " of " + transformed_name(c))
      << "; the response " << (e.gradient < 0 ? "falls" : "rises") << " as " << c.name << " increases, everywhere\n";
  }
  for (int ci : d.through_function)
    o << "  " << pad(covariate_name(spec, ci), 14) << "enters through a spline or term function; see below and --curves\n";
  o << "\n";
}

}  // namespace

std::string describe_text(const ModelSpec& spec, const NicheDescription& d, const DescribeSettings& settings,
                          const std::vector<std::string>& warnings) {
  std::ostringstream o;
  header(o, spec);
  held(o, spec, d);
  if (d.form) {
    std::string names;
    for (int c : d.form->covariates) names += (names.empty() ? "" : ", ") + covariate_name(spec, c);
    quadratic_form(o, *d.form);
    o << "Shape in " << names << ": " << shape_sentence(*d.analysis) << ".\n\n";
    stationary(o, spec, d, settings);
    axes(o, spec, d, settings);
    rotations(o, spec, d, settings);
  }
  if (d.pair) pair_section(o, spec, d);
  linear(o, spec, d);
  o << beyond_second_order_text(spec, d);
  if (!warnings.empty()) {
    o << "Warnings\n";
    for (const std::string& w : warnings) o << "  ! " << w << "\n";
  }
  return o.str();
}

}  // namespace habcast::cli
