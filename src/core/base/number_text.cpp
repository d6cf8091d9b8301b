#include "core/base/number_text.hpp"

#include <cstdio>

namespace habcast {

std::string significant(double value, int digits) {
  char text[48];
  std::snprintf(text, sizeof text, "%.*g", digits, value);
  return text;
}

std::string count_of(std::int64_t count, const std::string& noun, const std::string& plural) {
  return std::to_string(count) + " " + (count == 1 ? noun : (plural.empty() ? noun + "s" : plural));
}

}  // namespace habcast
