#pragma once
// Numbers as people read them in messages, reports and pictures.
#include <cstdint>
#include <string>

namespace habcast {

/// `value` with at most `digits` significant digits, shortest form ("%.*g": 0.25, 1e-05, 3.14159).
std::string significant(double value, int digits);

/// A count with its noun in the right number: "1 pixel", "3 pixels", "1 sample", "0 samples".
/// `plural` defaults to the noun + "s".
std::string count_of(std::int64_t count, const std::string& noun, const std::string& plural = "");

}  // namespace habcast
