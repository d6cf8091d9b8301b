#pragma once
// One-dimensional response curves and the numerical optimum of models that are not (only)
// second-order: splines, higher powers, term functions. A curve is the prediction along one
// covariate with every other covariate held at the reference point describe uses; its band is the
// delta-method interval of predict (eta +- z se(eta), mapped through the inverse link), computed by
// the same TermPlan and Evaluator, so a curve is exactly what predict would map for those values.
#include <optional>
#include <string>
#include <vector>

#include "core/domain/training_samples.hpp"
#include "core/model/model_spec.hpp"
#include "core/model/term_plan.hpp"
#include "core/niche/quadratic_form.hpp"

namespace habcast {

struct CurveOptions {
  int points = 101;         ///< grid points of a continuous curve
  double margin = 0.15;     ///< the grid extends this share of the training range beyond each end
  double confidence = 0.95;
};

struct CurvePoint {
  double raw = 0.0;    ///< continuous: raw value; categorical: the level's code
  double model = 0.0;  ///< continuous: model value; categorical: level index
  bool valid = false;  ///< false where a term is undefined (log of a non-positive value, ...)
  double eta = 0.0, se_eta = 0.0, mu = 0.0, lower = 0.0, upper = 0.0;  ///< se and limits NaN without covariance
  bool inside_training = true;  ///< continuous: within the training range (true without samples)
};

struct ResponseCurve {
  int covariate = -1;
  bool categorical = false;
  std::vector<CurvePoint> points;
  std::vector<std::string> labels;  ///< categorical: level names, one per point
  std::vector<bool> level_seen;     ///< categorical: level present in the training samples
  std::optional<double> training_min, training_max;  ///< raw units; unset without samples
  std::vector<double> rug;          ///< raw training values (continuous), sorted
  /// Boundary knots (raw units) of each spline basis of the covariate: beyond them the basis is its
  /// own extension, so the curve there is extrapolation by construction.
  std::vector<std::pair<double, double>> spline_boundaries;
};

/// Predictions along continuous `covariate` at the raw values `raw`, every other covariate at
/// `reference`. Throws UsageError for a categorical covariate.
std::vector<CurvePoint> predict_along(const ModelSpec& spec, const TermPlan& plan, const ReferencePoint& reference,
                                      int covariate, const std::vector<double>& raw, double confidence);

/// Predictions at every level of categorical `covariate`, every other covariate at `reference`.
std::vector<CurvePoint> predict_levels(const ModelSpec& spec, const TermPlan& plan, const ReferencePoint& reference,
                                       int covariate, double confidence);

/// The curve of every covariate a term uses and `held` does not list, in model order.
std::vector<ResponseCurve> response_curves(const ModelSpec& spec, const TermPlan& plan, const TrainingSamples* samples,
                                           const ReferencePoint& reference, const std::vector<int>& held,
                                           const CurveOptions& options);

/// Where the linear predictor (and so the response: every inverse link is increasing) is largest
/// within the convex hull of the training points in the analysed covariates, found by a compass
/// search (Kolda, Lewis & Torczon 2003, SIAM Review 45: 385-482) that starts at the best training
/// point, tries +-step along each covariate in turn, accepts the first move that raises eta and
/// stays in the hull, halves the steps when none does, and stops when every step is below 1e-7 of
/// its covariate's training range (or after 20000 evaluations). The hull is exact (TrainingHull);
/// the search finds a local maximum, which for the smooth, few-humped curves of habitat models is
/// the one near the best training point.
struct NumericalOptimum {
  std::vector<int> covariates;  ///< analysed: continuous, used, not held
  std::vector<double> model, raw;
  double eta = 0.0, se_eta = 0.0, mu = 0.0, lower = 0.0, upper = 0.0;
  /// True when a move that would still raise eta left the hull at the final step: the response
  /// keeps rising towards the edge of the training data, so the optimum is the data's edge.
  bool at_hull_edge = false;
  int evaluations = 0;
  std::string method;
};

/// Unset (with `why` filled) without training samples or analysed covariates.
std::optional<NumericalOptimum> numerical_optimum(const ModelSpec& spec, const TermPlan& plan,
                                                  const TrainingSamples* samples, const ReferencePoint& reference,
                                                  const std::vector<int>& held, double confidence, std::string& why);

/// True when the model is not a polynomial of degree <= 2 in its continuous covariates without
/// term functions (a spline, a term function, a power above 2 or a product of degree above 2).
bool beyond_second_order(const ModelSpec& spec, const TermPlan& plan);

}  // namespace habcast
