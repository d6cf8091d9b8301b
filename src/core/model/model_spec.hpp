#pragma once
// The parsed, validated model file. Knows nothing of rasters; the TOML reader (model_file.hpp)
// builds it, the term plan compiles its terms, and the pipeline reads raster paths from it.
#include <Eigen/Core>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "core/model/resampling.hpp"
#include "core/model/spline_basis.hpp"

namespace habcast {

enum class Family { binomial, poisson, gaussian };
enum class Link { logit, probit, cloglog, log, identity };

/// Monotone transform applied to a continuous covariate's raw value before standardisation.
enum class Transform { none, log, log1p, sqrt };

/// One level of a categorical covariate: the integer code stored in rasters and training tables.
struct Level {
  std::int64_t code = 0;
  std::string name;
};

struct LevelLookup;

struct Covariate {
  std::string name;
  bool categorical = false;
  std::string units;
  std::string description;
  // Continuous covariates: model value = (transform(raw) - center) / scale.
  Transform transform = Transform::none;
  double center = 0.0;
  double scale = 1.0;
  // Categorical covariates: levels known to the model, and the one absorbed by the intercept.
  std::vector<Level> levels;
  std::string reference_level;
  // Continuous covariates: spline bases the terms ns(NAME)[k] and bs(NAME)[k] use (model units).
  std::optional<SplineDefinition> natural_spline;
  std::optional<SplineDefinition> bspline;
  // Optional default raster (already resolved relative to the model file) and band.
  std::optional<std::string> raster;
  int band = 1;
  /// How to bring the raster onto another grid when it is not on the target grid (key
  /// `resampling`); unset: the rule of docs/alignment.md (bilinear / average / nearest / mode).
  std::optional<Resampling> resampling;
  long line = 0;  ///< line of the covariate's table in the model file, for messages

  /// Index into `levels` of the level with this code, or -1 when the model never saw it.
  [[nodiscard]] int level_index(std::int64_t code) const;

  /// The one rule by which text names a level, wherever it does (a term's `soil[...]`, a training
  /// table cell, describe's --level, fit's --reference): the text is read as a level's name and,
  /// when it is a whole number, as a level's code. If exactly one level fits, or both readings give
  /// the same level, that level is meant. If the readings give two different levels (the name of one
  /// is the code of another) the text is ambiguous. docs/model-format.md, "Naming a level".
  [[nodiscard]] LevelLookup find_level(const std::string& text) const;
  /// "heath (code 1), bog (code 2)": the levels as a message lists them.
  [[nodiscard]] std::string level_list() const;
};

/// The result of Covariate::find_level.
struct LevelLookup {
  int index = -1;          ///< the level meant, or -1 (none fits, or the text is ambiguous)
  int by_name = -1;        ///< the level whose name is the text, or -1
  int by_code = -1;        ///< the level whose code the text is, or -1
  [[nodiscard]] bool ambiguous() const { return by_name >= 0 && by_code >= 0 && by_name != by_code; }
  [[nodiscard]] bool found() const { return index >= 0; }
  /// For an ambiguous lookup: ""1" is the name of level "1" (code 2) and the code of level
  /// "0" (code 1)", naming both readings. Empty otherwise.
  [[nodiscard]] std::string ambiguity(const Covariate& c, const std::string& text) const;
  /// Whether the text was read as a name (false: as a code). Meaningful when found().
  [[nodiscard]] bool read_as_name() const { return by_name >= 0; }
};

/// The code a level label stands for when read as a number: a whole number ("2", "2.0") that a
/// 64-bit integer holds; else nothing.
std::optional<std::int64_t> code_in_text(const std::string& text);

/// The level code a raster or table value stands for: the value itself when it is a whole number
/// that a 64-bit integer can hold, else nothing (2.5, 1e30, NaN and infinities are codes of no level).
/// Inline: it runs for every pixel of every categorical covariate.
inline std::optional<std::int64_t> level_code(double value) {
  // 2^63 is exact in double; converting anything at or beyond it (or NaN) would be undefined.
  // Inside that range truncation is defined, and a value is whole exactly when truncating it
  // changes nothing.
  constexpr double limit = 9223372036854775808.0;
  if (!(value >= -limit && value < limit)) return std::nullopt;
  const auto whole = static_cast<std::int64_t>(value);
  if (static_cast<double>(whole) != value) return std::nullopt;
  return whole;
}

/// How covariate values were taken at field points when the model was fitted ([training]
/// sampling); `habcast evaluate --model` samples its points the same way.
enum class PointSampling {
  pixel,     ///< the value of the pixel that contains the point
  bilinear,  ///< continuous covariates interpolated between the 4 nearest pixel centres
};

struct ModelSpec {
  std::string path;  ///< the model file, as given
  int format_version = 1;
  std::string name;
  std::string description;
  std::string response;
  Family family = Family::binomial;
  Link link = Link::logit;

  std::vector<Covariate> covariates;

  // Terms in the order of `estimates` and of the covariance matrix's rows and columns.
  std::vector<std::string> terms;
  std::vector<long> term_lines;  ///< line of each term label, for messages
  std::vector<double> estimates;
  std::optional<Eigen::MatrixXd> covariance;

  // Offset added to the linear predictor: a term expression (coefficient 1) or a constant.
  std::optional<std::string> offset_term;
  double offset_constant = 0.0;
  long offset_line = 0;  ///< line of [coefficients] offset, for messages

  // Fit statistics as recorded by the fitting software (optional; shown in reports, not used in
  // predictions).
  std::optional<double> deviance;
  std::optional<double> null_deviance;
  std::optional<double> aic;
  std::optional<std::int64_t> observations;  ///< n, the observations the model was fitted on

  std::optional<std::string> training_samples;  ///< resolved relative to the model file
  long training_line = 0;
  PointSampling sampling = PointSampling::pixel;  ///< [training] sampling; "pixel" when absent

  /// Index of the covariate with this name, or -1.
  [[nodiscard]] int covariate_index(const std::string& covariate_name) const;
  [[nodiscard]] std::size_t continuous_count() const;
};

const char* to_string(Family family);
const char* to_string(Link link);
const char* to_string(Transform transform);
const char* to_string(PointSampling sampling);

/// What the model predicts, in words: "predicted probability of presence", "predicted expected
/// count of nests", ... (band descriptions, plot legends).
std::string response_description(const ModelSpec& spec);

}  // namespace habcast
