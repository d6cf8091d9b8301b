#include "core/model/formula.hpp"

#include <algorithm>
#include <cctype>
#include <set>

#include "core/base/error.hpp"
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
      const std::string word = term.substr(i, j - i);
      if (!function && std::find(names.begin(), names.end(), word) == names.end()) names.push_back(word);
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

/// Expands each factor that is a bare categorical covariate into its non-reference levels.
std::vector<std::string> expand_term(const std::string& term, const ModelSpec& spec) {
  std::vector<std::string> labels{""};
  for (const auto& [sep, factor] : split_top_level(term, ":")) {
    (void)sep;
    std::vector<std::string> choices;
    const int index = spec.covariate_index(factor);
    if (index >= 0 && spec.covariates[static_cast<std::size_t>(index)].categorical) {
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
