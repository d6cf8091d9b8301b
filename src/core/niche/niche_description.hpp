#pragma once
// Everything `habcast describe` reports about a model, computed without any I/O: the reference
// point, the quadratic form of the curved covariates and its canonical analysis, the covariates
// that enter only linearly, the chosen pair of covariates (tilt, conditional optima, training
// hull) and whether the optimum is supported by training data.
#include <map>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "core/domain/training_samples.hpp"
#include "core/domain/training_support.hpp"
#include "core/model/model_spec.hpp"
#include "core/model/term_plan.hpp"
#include "core/niche/canonical_analysis.hpp"
#include "core/niche/quadratic_form.hpp"
#include "core/niche/response_curves.hpp"
#include "core/numeric/convex_hull_2d.hpp"

namespace habcast {

struct DescribeSettings {
  std::map<std::string, double> at;           ///< continuous covariate -> raw value to hold it at
  std::map<std::string, std::string> levels;  ///< categorical covariate -> level name or code
  std::optional<std::pair<std::string, std::string>> pair;  ///< covariates of the pair section
  CanonicalOptions canonical;
  bool curves = false;  ///< compute the response curves (describe --curves)
  CurveOptions curve_options;
};

/// A covariate that enters the model only linearly: eta changes by `gradient` per model unit.
struct LinearEffect {
  int covariate = -1;
  double gradient = 0.0;  ///< per model unit (one `scale` of the transformed value)
};

struct PairDescription {
  int first = -1, second = -1;  ///< covariate indices
  QuadraticForm form;           ///< in (first, second), every other covariate at the reference
  CanonicalAnalysis analysis;   ///< of that plane
  ConditionalOptimum first_given_second;
  ConditionalOptimum second_given_first;
  std::vector<Point2> training;  ///< training points, model units (empty without samples)
  std::vector<Point2> hull;      ///< their convex hull, model units
  /// Whether the plane's stationary point lies in the training hull (unset without samples or
  /// without a unique stationary point).
  std::optional<bool> stationary_inside_hull;
};

struct NicheDescription {
  ReferencePoint reference;
  std::vector<int> held;                   ///< continuous covariates held by --at
  std::vector<LinearEffect> linear;        ///< used, continuous, not curved, not held
  std::vector<int> through_function;       ///< enter only through a term function such as log(); held
  std::optional<QuadraticForm> form;       ///< unset when no covariate is curved
  std::optional<CanonicalAnalysis> analysis;
  std::optional<SupportCheck> support;     ///< of the stationary point; needs samples and a unique point
  std::optional<PairDescription> pair;     ///< needs two continuous covariates
  bool has_samples = false;
  /// Beyond second order (splines, term functions, higher powers): the canonical analysis covers
  /// only the second-order part, or nothing, and the numerical optimum is the answer.
  bool beyond_second_order = false;
  std::string canonical_note;                  ///< why the canonical analysis is partial or absent
  std::optional<NumericalOptimum> numerical;   ///< set for models beyond second order, with samples
  std::string numerical_note;                  ///< why `numerical` is unset
  std::vector<ResponseCurve> curves;           ///< with DescribeSettings::curves
};

/// Describes the model. `samples` may be null (no reference means, no support checks). Throws
/// UsageError for settings that name unknown covariates or levels, InputError for a model that is
/// not second order in its curved covariates.
NicheDescription describe_niche(const ModelSpec& spec, const TermPlan& plan, const TrainingSamples* samples,
                                const DescribeSettings& settings);

/// d raw / d model value of continuous covariate `c` at model value `value`, for converting
/// standard errors to raw units (the inverse transform's derivative times the scale).
double raw_value_derivative(const Covariate& c, double value);

}  // namespace habcast
