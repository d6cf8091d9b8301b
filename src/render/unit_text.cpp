#include "render/unit_text.hpp"

#include <array>
#include <cctype>
#include <string_view>

#include "core/base/number_text.hpp"

namespace habcast {

namespace {

// Unit symbols (SI and a few in common ecological use) whose trailing exponent is typeset.
// A token such as "PM10" is not among them and keeps its digits.
constexpr std::array<std::string_view, 22> kSymbols{"m",  "km", "cm", "mm", "ha", "s",  "h",   "d",  "yr", "g",  "kg",
                                                    "mg", "l",  "L",  "mol", "W", "J",  "Pa", "ind", "N", "day", "year"};

const char* superscript(char c) {
  switch (c) {
    case '0': return "⁰";
    case '1': return "¹";
    case '2': return "²";
    case '3': return "³";
    case '4': return "⁴";
    case '5': return "⁵";
    case '6': return "⁶";
    case '7': return "⁷";
    case '8': return "⁸";
    case '9': return "⁹";
    case '-': return "⁻";
    default: return nullptr;
  }
}

/// One token (no spaces or slashes): a unit symbol with an exponent, a degree sign, or as it is.
std::string token(const std::string& t) {
  if (t == "degC" || t == "deg_C" || t == "degreesC") return "°C";
  if (t == "degF" || t == "deg_F") return "°F";
  if (t == "+-" || t == "+/-") return "±";
  if (t == "degrees" || t == "degree" || t == "deg") return "°";
  std::size_t letters = 0;
  while (letters < t.size() && std::isalpha(static_cast<unsigned char>(t[letters]))) ++letters;
  if (letters == 0 || letters == t.size()) return t;
  bool known = false;
  for (std::string_view s : kSymbols) known = known || s == std::string_view(t).substr(0, letters);
  std::size_t at = letters + (t[letters] == '^' ? 1 : 0);
  const std::size_t start = at;
  if (at < t.size() && t[at] == '-') ++at;
  const std::size_t digits_start = at;
  while (at < t.size() && std::isdigit(static_cast<unsigned char>(t[at]))) ++at;
  if (!known || at != t.size() || digits_start == at) return t;
  std::string out = t.substr(0, letters);
  for (std::size_t i = start; i < t.size(); ++i) out += superscript(t[i]);
  return out;
}

}  // namespace

std::string typeset_units(const std::string& units) {
  std::string out, current;
  for (std::size_t i = 0; i <= units.size(); ++i) {
    const char c = i < units.size() ? units[i] : ' ';
    if (i == units.size() || c == ' ' || c == '/' || c == '(' || c == ')' || c == ',') {
      out += token(current);
      current.clear();
      if (i < units.size()) out += c;
    } else {
      current += c;
    }
  }
  return out;
}

std::string typeset_number(double value, int digits) {
  std::string s = significant(value, digits);
  if (!s.empty() && s[0] == '-') s = "−" + s.substr(1);
  return s;
}

}  // namespace habcast
