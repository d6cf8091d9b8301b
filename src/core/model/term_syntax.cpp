#include "core/model/term_syntax.hpp"

#include <algorithm>
#include <cctype>
#include <charconv>
#include <tuple>

#include "core/base/error.hpp"

namespace habcast {

const char* to_string(TermFunction function) {
  switch (function) {
    case TermFunction::none: return "";
    case TermFunction::log: return "log";
    case TermFunction::log1p: return "log1p";
    case TermFunction::sqrt: return "sqrt";
    case TermFunction::exp: return "exp";
    case TermFunction::natural_spline: return "ns";
    case TermFunction::bspline: return "bs";
  }
  return "?";
}

namespace {

constexpr int kMaxPower = 9;

std::string declared_list(const ModelSpec& spec) {
  std::string s;
  for (const Covariate& c : spec.covariates) s += (s.empty() ? "" : ", ") + c.name;
  return s.empty() ? "(none)" : s;
}

/// Recursive-descent parser over the label with spaces removed.
class TermParser {
 public:
  TermParser(std::string text, const std::string& label, const ModelSpec& spec, const std::string& file,
             long line, const char* role)
      : s_(std::move(text)), label_(label), spec_(spec), file_(file), line_(line), role_(role) {}

  Term parse() {
    Term term;
    if (s_ == "(Intercept)" || s_ == "1") {
      term.intercept = true;
      term.canonical = "(Intercept)";
      return term;
    }
    if (s_.empty()) fail("empty term; write a covariate name such as \"tmin\", or \"(Intercept)\"");
    term.factors.push_back(factor());
    while (pos_ < s_.size() && s_[pos_] == ':') {
      ++pos_;
      term.factors.push_back(factor());
    }
    if (pos_ != s_.size())
      fail("unexpected \"" + s_.substr(pos_) + "\"; terms are products of factors joined by ':', e.g. \"tmin:precip^2\"");
    canonicalise(term);
    return term;
  }

 private:
  [[noreturn]] void fail(const std::string& why) const {
    throw InputError(located(file_, line_, std::string(role_) + " \"" + label_ + "\": " + why));
  }

  std::string name() {
    const std::size_t start = pos_;
    while (pos_ < s_.size() && (std::isalnum(static_cast<unsigned char>(s_[pos_])) || s_[pos_] == '_' || s_[pos_] == '.'))
      ++pos_;
    if (start == pos_) {
      if (pos_ < s_.size()) fail(std::string("unexpected '") + s_[pos_] + "' where a covariate name was expected");
      fail("a factor is missing after ':'");
    }
    return s_.substr(start, pos_ - start);
  }

  bool accept(char c) {
    if (pos_ < s_.size() && s_[pos_] == c) {
      ++pos_;
      return true;
    }
    return false;
  }

  void expect(char c, const char* context) {
    if (!accept(c)) fail(std::string("expected '") + c + "' " + context);
  }

  int power() {
    const std::size_t start = pos_;
    while (pos_ < s_.size() && std::isdigit(static_cast<unsigned char>(s_[pos_]))) ++pos_;
    int value = 0;
    const auto [ptr, ec] = std::from_chars(s_.data() + start, s_.data() + pos_, value);
    (void)ptr;
    if (start == pos_ || ec != std::errc() || value < 1 || value > kMaxPower)
      fail("a power must be a whole number from 1 to " + std::to_string(kMaxPower) + ", as in \"x^2\"");
    return value;
  }

  int covariate(const std::string& covariate_name) {
    const int index = spec_.covariate_index(covariate_name);
    if (index < 0)
      fail("uses covariate \"" + covariate_name + "\", which is not declared; declared covariates are " +
           declared_list(spec_));
    return index;
  }

  TermFactor continuous_factor(const std::string& covariate_name, TermFunction fn) {
    TermFactor f;
    f.covariate = covariate(covariate_name);
    f.function = fn;
    if (spec_.covariates[static_cast<std::size_t>(f.covariate)].categorical)
      fail("covariate \"" + covariate_name + "\" is categorical; use one indicator term per level, e.g. \"" +
           covariate_name + "[" + first_non_reference_level(f.covariate) + "]\"");
    return f;
  }

  std::string first_non_reference_level(int index) const {
    const Covariate& c = spec_.covariates[static_cast<std::size_t>(index)];
    for (const Level& l : c.levels)
      if (l.name != c.reference_level) return l.name;
    return "LEVEL";
  }

  TermFactor level_factor(const std::string& covariate_name) {
    TermFactor f;
    f.covariate = covariate(covariate_name);
    const Covariate& c = spec_.covariates[static_cast<std::size_t>(f.covariate)];
    const std::size_t close = s_.find(']', pos_);
    if (close == std::string::npos) fail("missing ']' after the level name");
    const std::string level = s_.substr(pos_, close - pos_);
    pos_ = close + 1;
    if (!c.categorical)
      fail("\"" + covariate_name + "[...]\" selects a level, but \"" + covariate_name +
           "\" is continuous; declare it with type = \"categorical\" and its levels");
    const LevelLookup found = c.find_level(level);
    if (found.ambiguous()) fail(found.ambiguity(c, level));
    if (!found.found())
      fail("\"" + level + "\" is not a level of \"" + covariate_name + "\" (by name or by code); its levels are " +
           c.level_list());
    f.level = found.index;
    return f;
  }

  /// "ns(x)[k]" / "bs(x)[k]": column k (1-based) of the spline basis declared on covariate x.
  TermFactor spline_factor(TermFunction fn) {
    const char* word = to_string(fn);
    const std::string covariate_name = name();
    TermFactor f = continuous_factor(covariate_name, fn);
    expect(')', std::string("to close ") + word + "(...)");
    const Covariate& c = spec_.covariates[static_cast<std::size_t>(f.covariate)];
    const std::optional<SplineDefinition>& basis = fn == TermFunction::natural_spline ? c.natural_spline : c.bspline;
    if (!basis)
      fail(std::string(word) + "(" + covariate_name + ") needs the basis declared on the covariate: add " + word +
           " = { knots = [...], boundary = [LOWER, UPPER] } to [covariates." + covariate_name + "]");
    const std::string example = std::string(word) + "(" + covariate_name + ")[1]";
    if (!accept('['))
      fail("a spline term names one column of the basis, as in \"" + example + "\"");
    const std::size_t start = pos_;
    while (pos_ < s_.size() && std::isdigit(static_cast<unsigned char>(s_[pos_]))) ++pos_;
    int column = 0;
    const auto [ptr, ec] = std::from_chars(s_.data() + start, s_.data() + pos_, column);
    (void)ptr;
    if (start == pos_ || ec != std::errc() || column < 1 || column > basis->columns() || !accept(']'))
      fail("the column of " + std::string(word) + "(" + covariate_name + ") must be a whole number from 1 to " +
           std::to_string(basis->columns()) + " (its basis has " + std::to_string(basis->columns()) +
           " columns), as in \"" + example + "\"");
    f.column = column - 1;
    return f;
  }

  TermFactor factor() {
    TermFactor f;
    const std::string word = name();
    if (accept('(')) {
      if (word == "I") {
        // R's I(x^2): the power sits inside the parentheses.
        f = continuous_factor(name(), TermFunction::none);
        if (accept('^')) f.power = power();
        expect(')', "to close I(...)");
      } else if (word == "ns" || word == "bs") {
        f = spline_factor(word == "ns" ? TermFunction::natural_spline : TermFunction::bspline);
        if (pos_ < s_.size() && s_[pos_] == '^')
          fail("a spline column carries no power; products of columns are written with ':'");
        return f;
      } else {
        TermFunction fn;
        if (word == "log") fn = TermFunction::log;
        else if (word == "log1p") fn = TermFunction::log1p;
        else if (word == "sqrt") fn = TermFunction::sqrt;
        else if (word == "exp") fn = TermFunction::exp;
        else
          fail("unknown function \"" + word + "\"; term functions are log, log1p, sqrt, exp, I(x^k) and the spline "
               "columns ns(x)[k], bs(x)[k]");
        f = continuous_factor(name(), fn);
        expect(')', "to close " + word + "(...)");
      }
    } else if (accept('[')) {
      f = level_factor(word);
      if (pos_ < s_.size() && s_[pos_] == '^') fail("a level indicator is 0 or 1; it cannot carry a power");
      return f;
    } else {
      f = continuous_factor(word, TermFunction::none);
    }
    if (accept('^')) {
      const int p = power();
      if (f.power != 1) fail("a power is given twice");
      f.power = p;
    }
    return f;
  }

  void expect(char c, const std::string& context) { expect(c, context.c_str()); }

  void canonicalise(Term& term) const {
    auto key = [](const TermFactor& f) { return std::tie(f.covariate, f.level, f.function, f.column); };
    std::sort(term.factors.begin(), term.factors.end(),
              [&](const TermFactor& a, const TermFactor& b) { return key(a) < key(b); });
    std::vector<TermFactor> merged;
    for (const TermFactor& f : term.factors) {
      if (!merged.empty() && key(merged.back()) == key(f)) {
        if (is_spline(f.function)) fail("repeats a spline column; a term holds at most one column of each basis");
        if (f.level >= 0) fail("repeats the indicator of one level; it is already 0 or 1");
        merged.back().power += f.power;
        // The documented bound (term_syntax.hpp: up to 18, as in x^9:x^9). Without it "x:x:...:x"
        // could ask for any power, evaluated by that many multiplications per pixel.
        if (merged.back().power > 2 * kMaxPower)
          fail("the powers of one factor add up to " + std::to_string(merged.back().power) + "; at most " +
               std::to_string(2 * kMaxPower) + " are allowed. Write the term with one power, e.g. \"x^3\"");
      } else {
        merged.push_back(f);
      }
    }
    for (std::size_t i = 1; i < merged.size(); ++i)
      if (is_spline(merged[i].function) && merged[i - 1].function == merged[i].function &&
          merged[i].covariate == merged[i - 1].covariate)
        fail("multiplies two columns of one spline basis; a term holds at most one column of each basis");
    for (std::size_t i = 1; i < merged.size(); ++i)
      if (merged[i].level >= 0 && merged[i - 1].level >= 0 && merged[i].covariate == merged[i - 1].covariate)
        fail("multiplies two levels of the same categorical covariate; the product is always 0");
    term.factors = std::move(merged);
    std::string label;
    for (const TermFactor& f : term.factors) {
      const Covariate& c = spec_.covariates[static_cast<std::size_t>(f.covariate)];
      std::string part;
      if (f.level >= 0) {
        part = c.name + "[" + c.levels[static_cast<std::size_t>(f.level)].name + "]";
      } else if (is_spline(f.function)) {
        part = std::string(to_string(f.function)) + "(" + c.name + ")[" + std::to_string(f.column + 1) + "]";
      } else {
        if (f.function == TermFunction::none) {
          part = c.name;
        } else {
          part.append(to_string(f.function)).append("(").append(c.name).append(")");
        }
        if (f.power != 1) part.append("^").append(std::to_string(f.power));
      }
      if (!label.empty()) label.append(":");
      label.append(part);
    }
    term.canonical = label;
  }

  std::string s_;
  const std::string& label_;
  const ModelSpec& spec_;
  const std::string& file_;
  long line_;
  const char* role_;
  std::size_t pos_ = 0;
};

}  // namespace

Term parse_term(const std::string& label, const ModelSpec& spec, const std::string& file, long line,
                const char* role) {
  std::string compact;
  for (char ch : label)
    if (!std::isspace(static_cast<unsigned char>(ch))) compact += ch;
  return TermParser(compact, label, spec, file, line, role).parse();
}

}  // namespace habcast
