#include "core/model/model_writer.hpp"

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <iterator>
#include <sstream>
#include <stdexcept>

namespace habcast {

std::string toml_number(double value) {
  if (!std::isfinite(value)) throw std::invalid_argument("toml_number: a model file holds finite numbers only");
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.17g", value);
  std::string s = buf;
  // TOML reads "3" as an integer; keep every float visibly a float.
  if (s.find_first_of(".eEn") == std::string::npos) s += ".0";
  return s;
}

std::string toml_string(const std::string& text) {
  std::string out = "\"";
  for (const char ch : text) {
    const auto u = static_cast<unsigned char>(ch);
    if (ch == '"') out += "\\\"";
    else if (ch == '\\') out += "\\\\";
    else if (ch == '\n') out += "\\n";
    else if (ch == '\t') out += "\\t";
    else if (ch == '\r') out += "\\r";
    else if (u < 0x20 || u == 0x7f) {
      char buf[8];
      std::snprintf(buf, sizeof buf, "\\u%04x", u);
      out += buf;
    } else {
      out += ch;
    }
  }
  return out + "\"";
}

namespace {

namespace fs = std::filesystem;

/// `target` (relative to the working folder, or absolute) relative to the model file's folder.
std::string relative_to_model(const std::string& target, const std::string& model_path) {
  const fs::path model_dir = fs::absolute(fs::path(model_path)).parent_path();
  const fs::path abs_target = fs::absolute(fs::path(target)).lexically_normal();
  const fs::path rel = abs_target.lexically_relative(model_dir.lexically_normal());
  // Relative paths let a model travel with its data; when the two share nothing but the root
  // ("../../../usr/share/...") an absolute path says more.
  const bool shares_folder = std::next(abs_target.begin()) != abs_target.end() &&
                             std::next(model_dir.begin()) != model_dir.end() &&
                             *std::next(abs_target.begin()) == *std::next(model_dir.begin());
  if (rel.empty() || (fs::path(target).is_absolute() && !shares_folder)) return abs_target.generic_string();
  return rel.generic_string();
}

std::string array_of_numbers(const double* values, std::size_t n) {
  std::string s = "[ ";
  for (std::size_t i = 0; i < n; ++i) s += (i ? ", " : "") + toml_number(values[i]);
  return s + " ]";
}

void write_model_table(std::ostringstream& os, const ModelSpec& spec) {
  os << "[model]\n";
  if (!spec.name.empty()) os << "name = " << toml_string(spec.name) << "\n";
  if (!spec.response.empty()) os << "response = " << toml_string(spec.response) << "\n";
  os << "family = " << toml_string(to_string(spec.family)) << "\n";
  os << "link = " << toml_string(to_string(spec.link)) << "\n";
  if (!spec.description.empty()) os << "description = " << toml_string(spec.description) << "\n";
  if (spec.deviance) os << "deviance = " << toml_number(*spec.deviance) << "\n";
  if (spec.null_deviance) os << "null_deviance = " << toml_number(*spec.null_deviance) << "\n";
  if (spec.aic) os << "aic = " << toml_number(*spec.aic) << "\n";
  if (spec.observations) os << "n = " << *spec.observations << "\n";
}

/// `ns = { knots = [...], boundary = [...] }` (bs: with its degree), model units.
void write_spline(std::ostringstream& os, const std::optional<SplineDefinition>& d) {
  if (!d) return;
  os << to_string(d->kind) << " = { knots = " << array_of_numbers(d->knots.data(), d->knots.size());
  const double boundary[2] = {d->lower, d->upper};
  os << ", boundary = " << array_of_numbers(boundary, 2);
  if (d->kind == SplineKind::bspline) os << ", degree = " << d->degree;
  if (d->intercept) os << ", intercept = true";
  os << " }\n";
}

void write_covariate(std::ostringstream& os, const Covariate& c, const std::string& model_path) {
  os << "\n[covariates." << c.name << "]\n";
  os << "type = " << (c.categorical ? "\"categorical\"" : "\"continuous\"") << "\n";
  if (!c.units.empty()) os << "units = " << toml_string(c.units) << "\n";
  if (!c.description.empty()) os << "description = " << toml_string(c.description) << "\n";
  if (c.categorical) {
    os << "levels = [ ";
    for (std::size_t i = 0; i < c.levels.size(); ++i)
      os << (i ? ", " : "") << "{ code = " << c.levels[i].code << ", name = " << toml_string(c.levels[i].name) << " }";
    os << " ]\n";
    os << "reference = " << toml_string(c.reference_level) << "\n";
  } else {
    if (c.transform != Transform::none) os << "transform = " << toml_string(to_string(c.transform)) << "\n";
    os << "center = " << toml_number(c.center) << "\n";
    os << "scale = " << toml_number(c.scale) << "\n";
    write_spline(os, c.natural_spline);
    write_spline(os, c.bspline);
  }
  if (c.raster) os << "raster = " << toml_string(relative_to_model(*c.raster, model_path)) << "\n";
  if (c.band != 1) os << "band = " << c.band << "\n";
  if (c.resampling) os << "resampling = " << toml_string(to_string(*c.resampling)) << "\n";
}

void write_coefficients(std::ostringstream& os, const ModelSpec& spec) {
  os << "\n[coefficients]\n";
  os << "terms = [ ";
  for (std::size_t i = 0; i < spec.terms.size(); ++i) os << (i ? ", " : "") << toml_string(spec.terms[i]);
  os << " ]\n";
  os << "estimates = " << array_of_numbers(spec.estimates.data(), spec.estimates.size()) << "\n";
  if (spec.covariance) {
    const Eigen::MatrixXd& V = *spec.covariance;
    os << "covariance = [\n";
    for (Eigen::Index i = 0; i < V.rows(); ++i) {
      const Eigen::VectorXd row = V.row(i).transpose();
      os << "  " << array_of_numbers(row.data(), static_cast<std::size_t>(row.size())) << ",\n";
    }
    os << "]\n";
  }
  if (spec.offset_term) os << "offset = " << toml_string(*spec.offset_term) << "\n";
  else if (spec.offset_constant != 0.0) os << "offset = " << toml_number(spec.offset_constant) << "\n";
}

}  // namespace

std::string write_model_text(const ModelSpec& spec, const std::string& model_path, const std::vector<std::string>& comments) {
  std::ostringstream os;
  for (const std::string& c : comments) os << "# " << c << "\n";
  if (!comments.empty()) os << "\n";
  os << "habcast_model = " << spec.format_version << "\n\n";
  write_model_table(os, spec);
  if (spec.training_samples) {
    os << "\n[training]\nsamples = " << toml_string(relative_to_model(*spec.training_samples, model_path)) << "\n";
    os << "sampling = \"" << to_string(spec.sampling) << "\"\n";
  }
  for (const Covariate& c : spec.covariates) write_covariate(os, c, model_path);
  write_coefficients(os, spec);
  return os.str();
}

}  // namespace habcast
