#include "core/base/error.hpp"

namespace habcast {

std::string located(const std::string& file, long line, const std::string& message) {
  if (line > 0) return file + ":" + std::to_string(line) + ": " + message;
  return file + ": " + message;
}

}  // namespace habcast
