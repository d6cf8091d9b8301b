#include "core/base/number_text.hpp"

#include <cstdio>

namespace habcast {

std::string significant(double value, int digits) {
  char text[48];
  std::snprintf(text, sizeof text, "%.*g", digits, value);
  return text;
}

}  // namespace habcast
