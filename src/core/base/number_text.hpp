#pragma once
// Numbers as people read them in messages, reports and pictures.
#include <string>

namespace habcast {

/// `value` with at most `digits` significant digits, shortest form ("%.*g": 0.25, 1e-05, 3.14159).
std::string significant(double value, int digits);

}  // namespace habcast
