#include "core/model/formula.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <regex>
#include <set>

#include "core/base/error.hpp"
#include "core/model/model_values.hpp"
#include "core/model/term_syntax.hpp"

namespace habcast {

namespace {

std::string trim(const std::string& s) {
  const auto b = s.find_first_not_of(" \t\r\n");
  if (b == std::string::npos) return "";
  const auto e = s.find_last_not_of(" \t\r\n");
  return s.substr(b, e - b + 1);
}

/// Splits at `separators` outside parentheses and brackets; each piece keeps the separator that
/// preceded it (the first piece gets '+').
std::vector<std::pair<char, std::string>> split_top_level(const std::string& text, const std::string& separators) {
  std::vector<std::pair<char, std::string>> parts;
  int depth = 0;
  char sign = '+';
  std::string current;
  for (char ch : text) {
    if (ch == '(' || ch == '[') ++depth;
    if (ch == ')' || ch == ']') --depth;
    if (depth == 0 && separators.find(ch) != std::string::npos) {
      parts.emplace_back(sign, trim(current));
      current.clear();
      sign = ch;
      continue;
    }
    current += ch;
  }
  parts.emplace_back(sign, trim(current));
  return parts;
}

[[noreturn]] void fail(const std::string& why) { throw UsageError("--formula: " + why); }

/// Names in a term that look like covariates (not function names, not level names in brackets).
void collect_names(const std::string& term, std::vector<std::string>& names) {
  std::size_t i = 0;
  while (i < term.size()) {
    const char ch = term[i];
    if (ch == '[') {
      i = term.find(']', i);
      if (i == std::string::npos) return;
      ++i;
      continue;
    }
    if (std::isalpha(static_cast<unsigned char>(ch))) {
      std::size_t j = i;
      while (j < term.size() && (std::isalnum(static_cast<unsigned char>(term[j])) || term[j] == '_' || term[j] == '.')) ++j;
      std::size_t k = j;
      while (k < term.size() && term[k] == ' ') ++k;
      const bool function = k < term.size() && term[k] == '(';
      const bool argument = k < term.size() && term[k] == '=';  // "df = 4" inside ns(...)
      const std::string word = term.substr(i, j - i);
      if (!function && !argument && std::find(names.begin(), names.end(), word) == names.end()) names.push_back(word);
      i = j;
      continue;
    }
    if (std::isdigit(static_cast<unsigned char>(ch))) {
      while (i < term.size() && (std::isalnum(static_cast<unsigned char>(term[i])) || term[i] == '.')) ++i;
      continue;
    }
    ++i;
  }
}

std::string rhs_of(const std::string& text, std::optional<std::string>* response) {
  const auto tilde = text.find('~');
  if (tilde == std::string::npos) return text;
  if (text.find('~', tilde + 1) != std::string::npos) fail("has more than one '~'");
  const std::string lhs = trim(text.substr(0, tilde));
  if (response && !lhs.empty()) *response = lhs;
  return text.substr(tilde + 1);
}

/// A spline factor of a formula: "ns(x, df = 4, boundary = [0, 9])".
struct SplineCall {
  SplineKind kind = SplineKind::natural;
  std::string covariate;
  std::optional<int> df, degree;
  std::optional<std::vector<double>> knots, boundary;
};

std::vector<double> number_list(const std::string& text, const std::string& where) {
  // [a, b] or R's c(a, b)
  std::string inner = trim(text);
  if (inner.size() >= 2 && inner.front() == '[' && inner.back() == ']') inner = inner.substr(1, inner.size() - 2);
  else if (inner.size() >= 3 && inner.rfind("c(", 0) == 0 && inner.back() == ')') inner = inner.substr(2, inner.size() - 3);
  else fail(where + " must be a list of numbers such as [12.5, 30]");
  std::vector<double> values;
  for (const auto& [sep, item] : split_top_level(inner, ",")) {
    (void)sep;
    if (item.empty() && values.empty()) continue;
    std::size_t used = 0;
    double v = 0.0;
    try {
      v = std::stod(item, &used);
    } catch (const std::exception&) {
      used = 0;
    }
    if (used != item.size() || item.empty() || !std::isfinite(v)) fail(where + ": \"" + item + "\" is not a number");
    values.push_back(v);
  }
  return values;
}

std::optional<SplineCall> spline_call(const std::string& factor) {
  static const std::regex pattern(R"(^\s*(ns|bs)\s*\(\s*([A-Za-z][A-Za-z0-9_.]*)\s*(,(.*))?\)\s*$)");
  std::smatch m;
  if (!std::regex_match(factor, m, pattern)) return std::nullopt;
  SplineCall call;
  call.kind = m[1] == "ns" ? SplineKind::natural : SplineKind::bspline;
  call.covariate = m[2];
  if (m[4].matched) {
    for (const auto& [sep, arg] : split_top_level(m[4].str(), ",")) {
      (void)sep;
      const auto eq = arg.find('=');
      if (eq == std::string::npos) fail(factor + ": write each argument as NAME = VALUE (df, knots, boundary, degree)");
      const std::string key = trim(arg.substr(0, eq));
      const std::string value = trim(arg.substr(eq + 1));
      const std::string where = factor + ": " + key;
      auto whole = [&]() {
        std::size_t used = 0;
        int v = 0;
        try {
          v = std::stoi(value, &used);
        } catch (const std::exception&) {
          used = 0;
        }
        if (used != value.size() || v < 1) fail(where + " must be a whole number of 1 or more");
        return v;
      };
      if (key == "df") call.df = whole();
      else if (key == "degree" && call.kind == SplineKind::bspline) call.degree = whole();
      else if (key == "knots") call.knots = number_list(value, where);
      else if (key == "boundary" || key == "Boundary.knots") call.boundary = number_list(value, where);
      else
        fail(factor + ": unknown argument \"" + key + "\"; " + (call.kind == SplineKind::natural ? "ns" : "bs") +
             "() takes df, knots, boundary" + (call.kind == SplineKind::bspline ? ", degree" : ""));
    }
  }
  if (call.df && call.knots)
    fail(factor + ": give either df (knots at quantiles of the training values) or knots, not both");
  if (!call.df && !call.knots)
    fail(factor + ": give df = N (knots at quantiles of the training values) or knots = [...]");
  return call;
}

/// R's quantile(x, p, type = 7) of sorted values.
double quantile7(const std::vector<double>& sorted, double p) {
  const double index = static_cast<double>(sorted.size() - 1) * p;  // 0-based
  const auto lo = static_cast<std::size_t>(std::floor(index));
  const auto hi = static_cast<std::size_t>(std::ceil(index));
  const double q = sorted[lo];
  if (!(index > static_cast<double>(lo)) || sorted[hi] == q) return q;
  const double h = index - static_cast<double>(lo);
  return (1.0 - h) * q + h * sorted[hi];
}

SplineDefinition spline_definition(const SplineCall& call, const std::string& factor, const Covariate& c,
                                   std::vector<double> values) {
  SplineDefinition d;
  d.kind = call.kind;
  d.degree = call.degree.value_or(3);
  const int order = d.degree + 1;
  values.erase(std::remove_if(values.begin(), values.end(), [](double v) { return !std::isfinite(v); }), values.end());
  std::sort(values.begin(), values.end());
  auto model = [&](double raw) {
    const double v = model_value(c, raw);
    if (!std::isfinite(v)) fail(factor + ": " + std::to_string(raw) + " is outside the domain of the covariate's transform");
    return v;
  };
  if (call.boundary) {
    if (call.boundary->size() != 2) fail(factor + ": boundary must hold two numbers, [LOWER, UPPER]");
    d.lower = model((*call.boundary)[0]);
    d.upper = model((*call.boundary)[1]);
    if (d.lower > d.upper) std::swap(d.lower, d.upper);
  } else {
    if (values.size() < 2) fail(factor + ": too few training values of \"" + c.name + "\" to place knots");
    d.lower = values.front();
    d.upper = values.back();
  }
  if (call.knots) {
    for (double k : *call.knots) d.knots.push_back(model(k));
    std::sort(d.knots.begin(), d.knots.end());
  } else {
    const int interior = call.kind == SplineKind::natural ? *call.df - 1 : *call.df - order + 1;
    if (interior < 0)
      fail(factor + ": df = " + std::to_string(*call.df) + " is too small; a " +
           (call.kind == SplineKind::natural ? "natural spline needs df >= 1"
                                             : "B-spline of degree " + std::to_string(d.degree) + " needs df >= " +
                                                   std::to_string(d.degree)));
    // Training values inside the boundary knots, as R's ns/bs take quantile(x[!outside], ...).
    std::vector<double> inside;
    for (double v : values)
      if (v >= d.lower && v <= d.upper) inside.push_back(v);
    if (interior > 0 && inside.empty()) fail(factor + ": no training value lies inside the boundary knots");
    const double step = 1.0 / static_cast<double>(interior + 1);  // R's seq.int(0, 1, length.out = k + 2)
    for (int i = 1; i <= interior; ++i) d.knots.push_back(quantile7(inside, static_cast<double>(i) * step));
  }
  if (const std::string why = d.problem(); !why.empty()) fail(factor + ": " + why);
  return d;
}

/// Expands each factor that is a bare categorical covariate into its non-reference levels, and
/// each spline factor into its basis columns.
std::vector<std::string> expand_term(const std::string& term, const ModelSpec& spec) {
  std::vector<std::string> labels{""};
  for (const auto& [sep, factor] : split_top_level(term, ":")) {
    (void)sep;
    std::vector<std::string> choices;
    const int index = spec.covariate_index(factor);
    if (const auto call = spline_call(factor)) {
      const int c = spec.covariate_index(call->covariate);
      if (c < 0) fail(factor + ": \"" + call->covariate + "\" is not a covariate of the model");
      const Covariate& cov = spec.covariates[static_cast<std::size_t>(c)];
      const auto& basis = call->kind == SplineKind::natural ? cov.natural_spline : cov.bspline;
      if (!basis) fail(factor + ": its basis was not declared (declare_formula_splines)");
      for (int k = 1; k <= basis->columns(); ++k)
        choices.push_back(std::string(to_string(call->kind)) + "(" + cov.name + ")[" + std::to_string(k) + "]");
    } else if (index >= 0 && spec.covariates[static_cast<std::size_t>(index)].categorical) {
      const Covariate& c = spec.covariates[static_cast<std::size_t>(index)];
      for (const Level& l : c.levels)
        if (l.name != c.reference_level) choices.push_back(c.name + "[" + l.name + "]");
      if (choices.empty())
        fail("categorical covariate \"" + c.name + "\" has only its reference level \"" + c.reference_level +
             "\" among the observations, so it cannot enter the model; drop it from the formula");
    } else {
      choices.push_back(factor);
    }
    std::vector<std::string> next;
    for (const std::string& prefix : labels)
      for (const std::string& choice : choices) next.push_back(prefix.empty() ? choice : prefix + ":" + choice);
    labels = std::move(next);
  }
  return labels;
}

}  // namespace

void declare_formula_splines(const std::string& text, ModelSpec& spec,
                             const std::function<std::vector<double>(int covariate)>& training_values) {
  for (const auto& [sign, term] : split_top_level(rhs_of(text, nullptr), "+-")) {
    (void)sign;
    for (const auto& [sep, factor] : split_top_level(term, ":")) {
      (void)sep;
      const auto call = spline_call(factor);
      if (!call) continue;
      const int c = spec.covariate_index(call->covariate);
      if (c < 0) fail(factor + ": \"" + call->covariate + "\" is not a covariate of the model");
      Covariate& cov = spec.covariates[static_cast<std::size_t>(c)];
      if (cov.categorical) fail(factor + ": \"" + cov.name + "\" is categorical; a spline needs a continuous covariate");
      const SplineDefinition d = spline_definition(*call, factor, cov, training_values(c));
      auto& slot = call->kind == SplineKind::natural ? cov.natural_spline : cov.bspline;
      if (slot && (slot->knots != d.knots || slot->lower != d.lower || slot->upper != d.upper || slot->degree != d.degree))
        fail(factor + ": \"" + cov.name + "\" already has a different " + to_string(call->kind) +
             "() basis in this formula; use one basis per covariate (the same call everywhere)");
      slot = d;
    }
  }
}

std::vector<std::string> formula_covariates(const std::string& text) {
  std::vector<std::string> names;
  for (const auto& [sign, term] : split_top_level(rhs_of(text, nullptr), "+-")) {
    (void)sign;
    collect_names(term, names);
  }
  return names;
}

Formula parse_formula(const std::string& text, const ModelSpec& spec) {
  Formula f;
  const std::string rhs = rhs_of(text, &f.response);
  if (trim(rhs).empty()) fail("is empty; write terms such as \"tmin + tmin^2 + precip + soil\"");
  if (rhs.find('*') != std::string::npos)
    fail("'*' (crossing) is not supported; write the terms out, e.g. \"a + b + a:b\" for \"a*b\"");
  bool intercept = true;
  std::vector<std::string> labels;
  std::set<std::string> seen;
  for (const auto& [sign, term] : split_top_level(rhs, "+-")) {
    if (term.empty()) fail("has an empty term (two '+' in a row, or a '+' at an end)");
    if (term == "0" || (sign == '-' && term == "1")) {
      intercept = false;
      continue;
    }
    if (term == "1") continue;
    if (sign == '-') fail("only \"- 1\" (no intercept) may be subtracted; leave other terms out instead");
    for (const std::string& label : expand_term(term, spec)) {
      Term parsed;
      try {
        parsed = parse_term(label, spec, "--formula", 0);
      } catch (const InputError& e) {
        throw UsageError(e.what());  // the formula is a command-line argument, not an input file
      }
      if (parsed.intercept) continue;
      if (!seen.insert(parsed.canonical).second)
        fail("term \"" + parsed.canonical + "\" appears twice; give each term once (a:b and b:a are the same term)");
      labels.push_back(parsed.canonical);
    }
  }
  if (intercept) f.terms.push_back("(Intercept)");
  f.terms.insert(f.terms.end(), labels.begin(), labels.end());
  if (f.terms.empty()) fail("has no terms left");
  return f;
}

}  // namespace habcast
