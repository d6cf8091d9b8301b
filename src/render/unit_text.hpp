#pragma once
// Typesetting of units and numbers for figures: what a model file spells in ASCII ("degC",
// "m2", "kg m-2 s-1", "+-") is shown as a printed figure would show it ("°C", "m²", "kg m⁻² s⁻¹",
// "±"), and negative numbers take a true minus sign (U+2212) rather than a hyphen.
#include <string>

namespace habcast {

/// `units` with temperature degrees, exponents of common unit symbols and "+-" typeset in Unicode.
/// Anything it does not recognise is left exactly as written.
std::string typeset_units(const std::string& units);

/// significant(value, digits) with a minus sign instead of a hyphen.
std::string typeset_number(double value, int digits = 4);

}  // namespace habcast
