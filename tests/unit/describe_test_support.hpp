#pragma once
// Helpers for the describe tests: models written as TOML text in the test, and the reference
// numbers that tests/reference/describe_canonical.R computed with R.
#include <cmath>
#include <cstdio>
#include <fstream>
#include <map>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "core/model/model_file.hpp"
#include "core/model/model_spec.hpp"
#include "test_support.hpp"

namespace habcast::test {

/// Shortest text that reads back as the same double.
inline std::string exact(double v) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.17g", v);
  return buf;
}

/// A model in two continuous covariates u and v (and optionally w) with the given terms and
/// estimates; `extra` is appended verbatim (covariance, more covariates).
inline ModelSpec model_with_terms(const std::vector<std::string>& terms, const std::vector<double>& estimates,
                                  const std::string& family = "poisson", const std::string& covariates_extra = "",
                                  const std::string& coefficients_extra = "") {
  std::string text = "habcast_model = 1\n[model]\nfamily = \"" + family + "\"\n";
  text += "[covariates.u]\nunits = \"degC\"\ncenter = 2.5\nscale = 1.5\n";
  text += "[covariates.v]\nunits = \"mm\"\ncenter = 900\nscale = 120\n";
  text += covariates_extra;
  text += "[coefficients]\nterms = [";
  for (std::size_t i = 0; i < terms.size(); ++i) text += (i ? ", \"" : " \"") + terms[i] + "\"";
  text += " ]\nestimates = [";
  for (std::size_t i = 0; i < estimates.size(); ++i) text += (i ? ", " : " ") + exact(estimates[i]);
  text += " ]\n" + coefficients_extra;
  return parse_model_text(text, "test-model.toml");
}

/// "quantity,value" rows of a reference CSV (lines starting with # skipped).
inline std::map<std::string, double> read_reference(const std::string& path) {
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open reference file " + path);
  std::map<std::string, double> values;
  std::string line;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#' || line.rfind("quantity,", 0) == 0) continue;
    const auto comma = line.find(',');
    values[line.substr(0, comma)] = std::stod(line.substr(comma + 1));
  }
  return values;
}

}  // namespace habcast::test
