#include "core/model_file.hpp"

#include <Eigen/Eigenvalues>
#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <regex>
#include <set>
#include <sstream>
#include <toml++/toml.h>

#include "core/error.hpp"
#include "core/term_plan.hpp"

namespace habcast {

namespace {

constexpr int kFormatVersion = 1;

long line_of(const toml::node& node) { return static_cast<long>(node.source().begin.line); }

/// Reads one table of the model file, remembering which keys were consumed so that anything left
/// over (a typo such as "centre") is reported instead of silently ignored.
class Section {
 public:
  Section(const toml::table& table, std::string name, const std::string& file)
      : table_(table), name_(std::move(name)), file_(file) {}

  [[noreturn]] void fail(const toml::node& node, const std::string& why) const {
    throw InputError(located(file_, line_of(node), why));
  }
  [[noreturn]] void fail_here(const std::string& why) const {
    throw InputError(located(file_, line_of(table_), why));
  }

  const toml::node* get(const std::string& key) {
    seen_.insert(key);
    return table_.get(key);
  }

  std::optional<std::string> string(const std::string& key) {
    const toml::node* n = get(key);
    if (!n) return std::nullopt;
    if (!n->is_string()) fail(*n, where(key) + " must be a quoted string");
    return n->value<std::string>();
  }

  std::optional<double> number(const std::string& key) {
    const toml::node* n = get(key);
    if (!n) return std::nullopt;
    return finite_number(*n, where(key));
  }

  double finite_number(const toml::node& n, const std::string& what) const {
    if (!n.is_number()) fail(n, what + " must be a number");
    const double v = *n.value<double>();
    if (!std::isfinite(v)) fail(n, what + " is " + std::to_string(v) + "; it must be a finite number");
    return v;
  }

  std::optional<std::int64_t> integer(const std::string& key) {
    const toml::node* n = get(key);
    if (!n) return std::nullopt;
    if (!n->is_integer()) fail(*n, where(key) + " must be a whole number");
    return n->value<std::int64_t>();
  }

  const toml::array* array(const std::string& key) {
    const toml::node* n = get(key);
    if (!n) return nullptr;
    if (!n->is_array()) fail(*n, where(key) + " must be an array [ ... ]");
    return n->as_array();
  }

  /// Reports the first key that no reader asked for.
  void reject_unknown(const std::string& allowed) const {
    for (auto&& [key, node] : table_) {
      if (!seen_.count(std::string(key.str())))
        throw InputError(located(file_, static_cast<long>(key.source().begin.line),
                                 "unknown key \"" + std::string(key.str()) + "\" in " + name_ +
                                     "; allowed keys are " + allowed));
    }
  }

  std::string where(const std::string& key) const { return name_ + " " + key; }
  const toml::table& table() const { return table_; }

 private:
  const toml::table& table_;
  std::string name_;
  const std::string& file_;
  std::set<std::string> seen_;
};

std::string resolve(const std::string& model_path, const std::string& relative) {
  namespace fs = std::filesystem;
  const fs::path p(relative);
  if (p.is_absolute()) return p.lexically_normal().string();
  const fs::path base = fs::path(model_path).parent_path();
  return (base / p).lexically_normal().string();
}

Family parse_family(Section& s, const toml::node& node, const std::string& text) {
  if (text == "binomial") return Family::binomial;
  if (text == "poisson") return Family::poisson;
  if (text == "gaussian") return Family::gaussian;
  s.fail(node, "unknown family \"" + text + "\"; use binomial, poisson or gaussian");
}

Link parse_link(Section& s, const toml::node& node, const std::string& text) {
  if (text == "logit") return Link::logit;
  if (text == "probit") return Link::probit;
  if (text == "cloglog") return Link::cloglog;
  if (text == "log") return Link::log;
  if (text == "identity") return Link::identity;
  s.fail(node, "unknown link \"" + text + "\"; use logit, probit, cloglog, log or identity");
}

Link default_link(Family family) {
  switch (family) {
    case Family::binomial: return Link::logit;
    case Family::poisson: return Link::log;
    case Family::gaussian: return Link::identity;
  }
  return Link::identity;
}

bool link_fits_family(Family family, Link link) {
  switch (family) {
    case Family::binomial: return link == Link::logit || link == Link::probit || link == Link::cloglog;
    case Family::poisson: return link == Link::log || link == Link::identity;
    case Family::gaussian: return link == Link::identity || link == Link::log;
  }
  return false;
}

void read_model_section(const toml::table& root, ModelSpec& spec) {
  const toml::node* node = root.get("model");
  if (!node || !node->is_table())
    throw InputError(located(spec.path, 0, "missing [model] table; add [model] with family = \"binomial\" (or poisson, gaussian)"));
  Section s(*node->as_table(), "[model]", spec.path);
  const toml::node* family_node = s.get("family");
  if (!family_node) s.fail_here("[model] needs family = \"binomial\", \"poisson\" or \"gaussian\"");
  if (!family_node->is_string()) s.fail(*family_node, "[model] family must be a quoted string");
  spec.family = parse_family(s, *family_node, *family_node->value<std::string>());
  spec.link = default_link(spec.family);
  if (const toml::node* link_node = s.get("link")) {
    if (!link_node->is_string()) s.fail(*link_node, "[model] link must be a quoted string");
    spec.link = parse_link(s, *link_node, *link_node->value<std::string>());
    if (!link_fits_family(spec.family, spec.link))
      s.fail(*link_node, std::string("link \"") + to_string(spec.link) + "\" does not fit family \"" +
                             to_string(spec.family) +
                             "\": its predictions could leave the response's range; allowed: binomial with logit, "
                             "probit or cloglog; poisson with log or identity; gaussian with identity or log");
  }
  spec.name = s.string("name").value_or("");
  spec.response = s.string("response").value_or("");
  spec.description = s.string("description").value_or("");
  spec.deviance = s.number("deviance");
  spec.null_deviance = s.number("null_deviance");
  spec.aic = s.number("aic");
  if (auto n = s.integer("n")) {
    if (*n < 1) s.fail(*s.get("n"), "[model] n is the number of observations the model was fitted on; it must be 1 or more");
    spec.observations = *n;
  }
  for (const char* key : {"deviance", "null_deviance"})
    if (const toml::node* d = s.get(key); d && *d->value<double>() < 0.0)
      s.fail(*d, std::string("[model] ") + key + " is a deviance and cannot be negative");
  s.reject_unknown("family, link, name, response, description, deviance, null_deviance, aic, n");
}

void read_training_section(const toml::table& root, ModelSpec& spec) {
  const toml::node* node = root.get("training");
  if (!node) return;
  if (!node->is_table()) throw InputError(located(spec.path, line_of(*node), "training must be a table [training]"));
  Section s(*node->as_table(), "[training]", spec.path);
  if (const toml::node* samples = s.get("samples")) {
    if (!samples->is_string()) s.fail(*samples, "[training] samples must be a quoted path to a CSV file");
    spec.training_samples = resolve(spec.path, *samples->value<std::string>());
    spec.training_line = line_of(*samples);
  }
  s.reject_unknown("samples");
}

bool valid_name(const std::string& name) {
  static const std::regex pattern("[A-Za-z][A-Za-z0-9_]*");
  return std::regex_match(name, pattern);
}

void read_levels(Section& s, Covariate& c) {
  const toml::array* levels = s.array("levels");
  if (!levels || levels->empty())
    s.fail_here("categorical covariate \"" + c.name +
                "\" needs levels = [ { code = 1, name = \"...\" }, ... ] with every code found in its raster");
  std::set<std::int64_t> codes;
  std::set<std::string> names;
  for (const toml::node& item : *levels) {
    if (!item.is_table()) s.fail(item, "each level of \"" + c.name + "\" must be { code = INTEGER, name = \"TEXT\" }");
    Section ls(*item.as_table(), "level of \"" + c.name + "\"", "");
    Level level;
    const toml::node* code = ls.get("code");
    const toml::node* name = ls.get("name");
    if (!code || !code->is_integer() || !name || !name->is_string())
      s.fail(item, "each level of \"" + c.name + "\" must be { code = INTEGER, name = \"TEXT\" }");
    for (auto&& [key, v] : *item.as_table()) {
      (void)v;
      if (key.str() != "code" && key.str() != "name")
        s.fail(item, "unknown key \"" + std::string(key.str()) + "\" in a level of \"" + c.name + "\"; use code and name");
    }
    level.code = *code->value<std::int64_t>();
    level.name = *name->value<std::string>();
    if (level.name.empty()) s.fail(item, "a level of \"" + c.name + "\" has an empty name");
    if (!codes.insert(level.code).second)
      s.fail(item, "level code " + std::to_string(level.code) + " of \"" + c.name + "\" is listed twice");
    if (!names.insert(level.name).second)
      s.fail(item, "level name \"" + level.name + "\" of \"" + c.name + "\" is listed twice");
    c.levels.push_back(level);
  }
  if (const toml::node* ref = s.get("reference")) {
    if (!ref->is_string()) s.fail(*ref, "reference of \"" + c.name + "\" must be a level name in quotes");
    c.reference_level = *ref->value<std::string>();
    if (!names.count(c.reference_level))
      s.fail(*ref, "reference level \"" + c.reference_level + "\" is not among the levels of \"" + c.name + "\"");
  } else {
    c.reference_level = c.levels.front().name;
  }
}

Transform parse_transform(Section& s, const std::string& covariate) {
  const toml::node* n = s.get("transform");
  if (!n) return Transform::none;
  const std::string t = n->value<std::string>().value_or("?");
  if (t == "none") return Transform::none;
  if (t == "log") return Transform::log;
  if (t == "log1p") return Transform::log1p;
  if (t == "sqrt") return Transform::sqrt;
  s.fail(*n, "unknown transform \"" + t + "\" for \"" + covariate + "\"; use none, log, log1p or sqrt");
}

Covariate read_covariate(const std::string& name, const toml::node& node, const ModelSpec& spec) {
  if (!node.is_table())
    throw InputError(located(spec.path, line_of(node), "covariates." + name + " must be a table [covariates." + name + "]"));
  Section s(*node.as_table(), "[covariates." + name + "]", spec.path);
  Covariate c;
  c.name = name;
  c.line = line_of(node);
  if (!valid_name(name))
    s.fail_here("covariate name \"" + name + "\" must start with a letter and hold only letters, digits and _");
  const std::string type = s.string("type").value_or("continuous");
  if (type != "continuous" && type != "categorical")
    s.fail(*s.get("type"), "type of \"" + name + "\" must be \"continuous\" or \"categorical\"");
  c.categorical = type == "categorical";
  c.units = s.string("units").value_or("");
  c.description = s.string("description").value_or("");
  if (auto raster = s.string("raster")) c.raster = resolve(spec.path, *raster);
  if (auto band = s.integer("band")) {
    if (*band < 1 || *band > 65535) s.fail(*s.get("band"), "band of \"" + name + "\" must be 1 or more");
    c.band = static_cast<int>(*band);
  }
  if (c.categorical) {
    for (const char* key : {"transform", "center", "scale"})
      if (const toml::node* n = s.get(key))
        s.fail(*n, std::string(key) + " applies to continuous covariates only; \"" + name + "\" is categorical");
    read_levels(s, c);
    s.reject_unknown("type, units, description, raster, band, levels, reference");
  } else {
    for (const char* key : {"levels", "reference"})
      if (const toml::node* n = s.get(key))
        s.fail(*n, std::string(key) + " applies to categorical covariates; add type = \"categorical\" to \"" + name + "\"");
    c.transform = parse_transform(s, name);
    c.center = s.number("center").value_or(0.0);
    c.scale = s.number("scale").value_or(1.0);
    if (c.scale <= 0.0) s.fail(*s.get("scale"), "scale of \"" + name + "\" must be positive (it divides the centred value)");
    s.reject_unknown("type, units, description, raster, band, transform, center, scale");
  }
  return c;
}

void read_covariates(const toml::table& root, ModelSpec& spec) {
  const toml::node* node = root.get("covariates");
  if (!node || !node->is_table() || node->as_table()->empty())
    throw InputError(located(spec.path, node ? line_of(*node) : 0,
                             "no covariates declared; add a [covariates.NAME] table for each covariate"));
  for (auto&& [key, value] : *node->as_table()) spec.covariates.push_back(read_covariate(std::string(key.str()), value, spec));
  // TOML tables are unordered; keep the order the author wrote, which reports and outputs follow.
  std::stable_sort(spec.covariates.begin(), spec.covariates.end(),
                   [](const Covariate& a, const Covariate& b) { return a.line < b.line; });
}

void check_covariance(const Section& s, const toml::node& node, const Eigen::MatrixXd& V, std::size_t p) {
  const double largest = V.cwiseAbs().maxCoeff();
  // Relative tolerance for asymmetry: matrices printed with ~15 significant digits round-trip well
  // inside 1e-9; real asymmetry is far larger (common practice, no source).
  for (Eigen::Index i = 0; i < V.rows(); ++i)
    for (Eigen::Index j = i + 1; j < V.cols(); ++j)
      if (std::fabs(V(i, j) - V(j, i)) > 1e-9 * std::max(largest, 1e-300))
        s.fail(node, "covariance is not symmetric: row " + std::to_string(i + 1) + ", column " + std::to_string(j + 1) +
                         " differs from row " + std::to_string(j + 1) + ", column " + std::to_string(i + 1));
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eig(V, Eigen::EigenvaluesOnly);
  const double min_eig = eig.eigenvalues().minCoeff();
  const double max_eig = eig.eigenvalues().maxCoeff();
  // Allow rounding-level negative eigenvalues of a PSD matrix printed in decimal (common practice,
  // no source): -1e-10 relative to the largest.
  if (min_eig < -1e-10 * std::max(max_eig, 0.0) || max_eig < 0.0) {
    std::ostringstream os;
    os << "covariance is not positive semi-definite (smallest eigenvalue " << min_eig
       << "); write the estimates' covariance matrix as your fitting software reports it (e.g. R's vcov())";
    s.fail(node, os.str());
  }
  (void)p;
}

void read_coefficients(const toml::table& root, ModelSpec& spec) {
  const toml::node* node = root.get("coefficients");
  if (!node || !node->is_table())
    throw InputError(located(spec.path, 0, "missing [coefficients] table with terms = [...] and estimates = [...]"));
  Section s(*node->as_table(), "[coefficients]", spec.path);
  const toml::array* terms = s.array("terms");
  const toml::array* estimates = s.array("estimates");
  if (!terms || terms->empty()) s.fail_here("[coefficients] needs terms = [ \"(Intercept)\", \"x\", ... ]");
  if (!estimates) s.fail_here("[coefficients] needs estimates = [ ... ], one number per term");
  for (const toml::node& t : *terms) {
    if (!t.is_string()) s.fail(t, "each term must be a quoted label such as \"tmin^2\"");
    spec.terms.push_back(*t.value<std::string>());
    spec.term_lines.push_back(line_of(t));
  }
  if (estimates->size() != terms->size())
    s.fail(*s.get("estimates"), "estimates has " + std::to_string(estimates->size()) + " numbers but terms has " +
                                    std::to_string(terms->size()) + " labels; give one estimate per term");
  for (std::size_t i = 0; i < estimates->size(); ++i)
    spec.estimates.push_back(s.finite_number((*estimates)[i], "estimate " + std::to_string(i + 1) + " (\"" + spec.terms[i] + "\")"));

  const std::size_t p = spec.terms.size();
  if (const toml::array* cov = s.array("covariance")) {
    const toml::node& cov_node = *s.get("covariance");
    if (cov->size() != p)
      s.fail(cov_node, "covariance has " + std::to_string(cov->size()) + " rows but there are " + std::to_string(p) +
                           " terms; it must be " + std::to_string(p) + " x " + std::to_string(p) + " in the order of terms");
    Eigen::MatrixXd V(static_cast<Eigen::Index>(p), static_cast<Eigen::Index>(p));
    for (std::size_t i = 0; i < p; ++i) {
      const toml::node& row = (*cov)[i];
      if (!row.is_array() || row.as_array()->size() != p)
        s.fail(row, "covariance row " + std::to_string(i + 1) + " must be an array of " + std::to_string(p) + " numbers");
      for (std::size_t j = 0; j < p; ++j)
        V(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) = s.finite_number(
            (*row.as_array())[j], "covariance row " + std::to_string(i + 1) + ", column " + std::to_string(j + 1));
    }
    check_covariance(s, cov_node, V, p);
    spec.covariance = std::move(V);
  }
  if (const toml::node* offset = s.get("offset")) {
    if (offset->is_string()) spec.offset_term = *offset->value<std::string>();
    else spec.offset_constant = s.finite_number(*offset, "[coefficients] offset");
  }
  s.reject_unknown("terms, estimates, covariance, offset");
}

void read_version(const toml::table& root, ModelSpec& spec) {
  const toml::node* v = root.get("habcast_model");
  if (!v)
    throw InputError(located(spec.path, 1, "not a habcast model file: the key habcast_model = " +
                                               std::to_string(kFormatVersion) + " is missing at the top"));
  if (!v->is_integer() || *v->value<std::int64_t>() != kFormatVersion)
    throw InputError(located(spec.path, line_of(*v), "unsupported model format version; this habcast reads habcast_model = " +
                                                        std::to_string(kFormatVersion)));
  spec.format_version = kFormatVersion;
  for (auto&& [key, node] : root) {
    const std::string k(key.str());
    if (k != "habcast_model" && k != "model" && k != "training" && k != "covariates" && k != "coefficients")
      throw InputError(located(spec.path, static_cast<long>(key.source().begin.line),
                               "unknown key \"" + k + "\"; the top level holds habcast_model, [model], [training], "
                               "[covariates.NAME] and [coefficients]"));
  }
}

}  // namespace

ModelSpec parse_model_text(const std::string& text, const std::string& path) {
  ModelSpec spec;
  spec.path = path;
  toml::table root;
  try {
    root = toml::parse(text, path);
  } catch (const toml::parse_error& e) {
    throw InputError(located(path, static_cast<long>(e.source().begin.line),
                             "not valid TOML: " + std::string(e.description())));
  }
  read_version(root, spec);
  read_model_section(root, spec);
  read_training_section(root, spec);
  read_covariates(root, spec);
  read_coefficients(root, spec);
  const TermPlan plan(spec);  // parses every term: unknown covariates, syntax errors, duplicates
  (void)plan;
  return spec;
}

ModelSpec read_model_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path + ": cannot open the model file; check the path and that it is readable");
  std::ostringstream buffer;
  buffer << in.rdbuf();
  if (in.bad()) throw InputError(path + ": cannot read the model file");
  return parse_model_text(buffer.str(), path);
}

}  // namespace habcast
