#include "core/stats/irls.hpp"

#include <Eigen/QR>
#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>

#include "core/base/error.hpp"
#include "core/base/number_text.hpp"
#include "core/model/glm_family.hpp"
#include "core/model/link.hpp"
#include "core/stats/aliased_terms.hpp"

namespace habcast {

namespace {

constexpr double kEps = std::numeric_limits<double>::epsilon();

// R's family objects keep mu and d mu / d eta away from the boundary while fitting (binomial
// linkinv within [eps, 1 - eps], log link at least eps, mu.eta at least eps) so that IRLS weights
// stay finite; we do the same, and report fits that lean on the clamp as separation.
double fitting_mu(Family family, Link link, double eta) {
  const double mu = link_inverse(link, eta);
  if (family == Family::binomial) return std::clamp(mu, kEps, 1.0 - kEps);
  if (link == Link::log) return std::max(mu, kEps);
  return mu;
}

double fitting_mu_eta(Link link, double eta) {
  const double d = link_inverse_derivative(link, eta);
  return link == Link::identity ? d : std::max(d, kEps);
}

struct State {
  Eigen::VectorXd beta;
  Eigen::VectorXd eta;
  Eigen::VectorXd mu;
  double deviance = 0.0;
};

class Irls {
 public:
  Irls(const GlmProblem& p, const Eigen::VectorXd& w, const Eigen::VectorXd& offset, const IrlsOptions& o)
      : p_(p), X_(p.X), w_(w), offset_(offset), o_(o) {}

  Irls(const GlmProblem& p, const Eigen::MatrixXd& X, const Eigen::VectorXd& w, const Eigen::VectorXd& offset,
       const IrlsOptions& o)
      : p_(p), X_(X), w_(w), offset_(offset), o_(o) {}

  /// Runs IRLS from R's starting values; returns the final state and sets converged()/iterations().
  State run() {
    const Eigen::Index n = X_.rows();
    State s;
    s.mu = family_starting_mu(p_.family, p_.y, w_);
    s.eta.resize(n);
    for (Eigen::Index i = 0; i < n; ++i) s.eta[i] = link_function(p_.link, s.mu[i]);
    for (Eigen::Index i = 0; i < n; ++i) s.mu[i] = fitting_mu(p_.family, p_.link, s.eta[i]);
    double dev_old = family_deviance(p_.family, p_.y, s.mu, w_);
    bool have_old = false;
    Eigen::VectorXd beta_old;
    for (iterations_ = 1; iterations_ <= o_.max_iterations; ++iterations_) {
      previous_ = s;  // its working weights give this iteration's least-squares solve (R's fit$qr)
      State next = step(s);
      // Step halving, as glm.fit: back off towards the previous coefficients while the deviance is
      // not finite or the fitted values leave the family's range.
      int halvings = 0;
      while (!acceptable(next)) {
        if (!have_old || ++halvings > 30)
          throw InputError("the model cannot be fitted: IRLS found no coefficients with a finite deviance; check the "
                           "response and covariate values for extreme numbers");
        next.beta = (next.beta + beta_old) / 2.0;
        evaluate(next);
      }
      last_change_ = std::fabs(next.deviance - dev_old) / (std::fabs(next.deviance) + 0.1);
      s = next;
      if (last_change_ < o_.tolerance) {
        converged_ = true;
        return s;
      }
      dev_old = s.deviance;
      beta_old = s.beta;
      have_old = true;
    }
    iterations_ = o_.max_iterations;
    return s;
  }

  [[nodiscard]] bool converged() const { return converged_; }
  /// The state at the start of the last iteration: its working weights produced the final update.
  [[nodiscard]] const State& previous() const { return previous_; }
  [[nodiscard]] int iterations() const { return iterations_; }
  [[nodiscard]] double last_change() const { return last_change_; }
  /// True when the weighted design lost rank during the iterations (weights collapsing to 0).
  [[nodiscard]] bool weighted_rank_lost() const { return weighted_rank_lost_; }

  /// (X'WX)^-1 from the QR factor of sqrt(W) X with the working weights at `s`. R (fit$qr) and
  /// statsmodels take the weights of the iteration before the final update (pass previous()),
  /// which carries that update's size into the standard errors; the converged state gives the
  /// inverse information at the estimate itself.
  Eigen::MatrixXd unscaled_covariance(const State& s) const {
    const Eigen::VectorXd sw = working_sqrt_weights(s);
    const Eigen::MatrixXd WX = sw.asDiagonal() * X_;
    Eigen::ColPivHouseholderQR<Eigen::MatrixXd> qr(WX);
    const Eigen::Index p = X_.cols();
    const Eigen::MatrixXd R = qr.matrixR().topLeftCorner(p, p).triangularView<Eigen::Upper>();
    const Eigen::MatrixXd Rinv = R.triangularView<Eigen::Upper>().solve(Eigen::MatrixXd::Identity(p, p));
    const Eigen::MatrixXd inner = Rinv * Rinv.transpose();  // (R'R)^-1 in pivoted order
    const auto& perm = qr.colsPermutation();
    return perm * inner * perm.transpose();
  }

  Eigen::VectorXd working_sqrt_weights(const State& s) const {
    Eigen::VectorXd sw(X_.rows());
    for (Eigen::Index i = 0; i < X_.rows(); ++i) {
      const double d = fitting_mu_eta(p_.link, s.eta[i]);
      sw[i] = std::sqrt(w_[i] * d * d / family_variance(p_.family, s.mu[i]));
    }
    return sw;
  }

  /// One IRLS update from `s` (no step halving).
  State step(const State& s) {
    const Eigen::Index n = X_.rows();
    Eigen::VectorXd z(n);
    const Eigen::VectorXd sw = working_sqrt_weights(s);
    for (Eigen::Index i = 0; i < n; ++i) {
      const double d = fitting_mu_eta(p_.link, s.eta[i]);
      z[i] = (s.eta[i] - offset_[i]) + (p_.y[i] - s.mu[i]) / d;
    }
    const Eigen::MatrixXd WX = sw.asDiagonal() * X_;
    Eigen::ColPivHouseholderQR<Eigen::MatrixXd> qr(WX);
    qr.setThreshold(o_.alias_tolerance);
    if (qr.rank() < X_.cols()) weighted_rank_lost_ = true;
    State next;
    next.beta = qr.solve(Eigen::VectorXd(sw.cwiseProduct(z)));
    evaluate(next);
    return next;
  }

 private:
  void evaluate(State& s) const {
    s.eta = X_ * s.beta + offset_;
    s.mu.resize(s.eta.size());
    for (Eigen::Index i = 0; i < s.eta.size(); ++i) s.mu[i] = fitting_mu(p_.family, p_.link, s.eta[i]);
    s.deviance = family_deviance(p_.family, p_.y, s.mu, w_);
  }

  bool acceptable(const State& s) const {
    if (!std::isfinite(s.deviance) || !s.beta.allFinite()) return false;
    if (p_.link == Link::identity && p_.family == Family::poisson)
      return (s.mu.array() > 0.0).all();  // poisson identity: mu must stay positive
    return s.mu.allFinite();
  }

  const GlmProblem& p_;
  const Eigen::MatrixXd& X_;
  const Eigen::VectorXd& w_;
  const Eigen::VectorXd& offset_;
  const IrlsOptions& o_;
  State previous_;
  bool converged_ = false;
  bool weighted_rank_lost_ = false;
  int iterations_ = 0;
  double last_change_ = std::numeric_limits<double>::infinity();
};

/// "points.csv:17" when the caller labelled the observations, else "row 17".
std::string observation_name(const GlmProblem& p, Eigen::Index i) {
  if (static_cast<Eigen::Index>(p.observation_labels.size()) == p.X.rows()) return p.observation_labels[static_cast<std::size_t>(i)];
  return "row " + std::to_string(i + 1);
}

std::string term_list(const GlmProblem& p, const std::vector<Eigen::Index>& columns) {
  std::string s;
  for (Eigen::Index c : columns) s += (s.empty() ? "" : ", ") + ("\"" + p.term_names[static_cast<std::size_t>(c)] + "\"");
  return s;
}

void check_shapes(const GlmProblem& p) {
  const Eigen::Index n = p.X.rows();
  if (p.y.size() != n || (p.weights.size() != 0 && p.weights.size() != n) || (p.offset.size() != 0 && p.offset.size() != n) ||
      static_cast<Eigen::Index>(p.term_names.size()) != p.X.cols())
    throw std::invalid_argument("fit_glm: inconsistent sizes of X, y, weights, offset and term names");
  if (!p.observation_labels.empty() && static_cast<Eigen::Index>(p.observation_labels.size()) != n)
    throw std::invalid_argument("fit_glm: observation labels do not match the rows of X");
  if (n <= p.X.cols())
    throw InputError("the model cannot be fitted: " + std::to_string(n) + " observations for " +
                     std::to_string(p.X.cols()) + " terms; a GLM needs more observations than terms (many more for "
                     "trustworthy estimates). Add points or drop terms");
  for (Eigen::Index i = 0; i < n; ++i)
    if (!p.X.row(i).allFinite() || (p.offset.size() && !std::isfinite(p.offset[i])))
      throw InputError("the model cannot be fitted: " + observation_name(p, i) +
                       " has a term or offset value that is not a finite number");
}

void check_aliasing(const GlmProblem& p, const Eigen::VectorXd& w, double tolerance) {
  const Eigen::MatrixXd WX = w.cwiseSqrt().asDiagonal() * p.X;
  const std::vector<AliasedColumn> aliased = find_aliased_columns(WX, tolerance);
  if (aliased.empty()) return;
  std::string why;
  for (const AliasedColumn& a : aliased) {
    const std::string& name = p.term_names[static_cast<std::size_t>(a.column)];
    if (!why.empty()) why += "; ";
    if (a.zero)
      why += "term \"" + name + "\" is 0 at every observation (a level never observed, or a covariate that is 0 "
             "everywhere)";
    else if (a.partners.size() == 1 && a.partners[0] == p.intercept_column)
      why += "term \"" + name + "\" is constant at every observation, so it repeats the intercept (a constant "
             "covariate cannot be estimated)";
    else
      why += "term \"" + name + "\" is a linear combination of " + term_list(p, a.partners);
  }
  throw InputError("the model cannot be fitted: its terms are aliased (the design matrix has rank " +
                   std::to_string(p.X.cols() - static_cast<Eigen::Index>(aliased.size())) + " < " +
                   std::to_string(p.X.cols()) + " terms): " + why + ". Remove the aliased term(s) from the formula");
}

/// Terms still moving after the deviance has converged. At a finite maximum one more IRLS step
/// changes nothing; where the data are separated the likelihood only approaches its supremum as a
/// coefficient runs off to infinity, the deviance change becomes tiny while each Newton step still
/// moves that coefficient by about one unit (Albert & Anderson 1984, Biometrika 71:1-10).
std::vector<Eigen::Index> diverging_terms(const State& converged, const State& probe) {
  std::vector<Eigen::Index> out;
  for (Eigen::Index j = 0; j < converged.beta.size(); ++j) {
    const double moved = std::fabs(probe.beta[j] - converged.beta[j]);
    if (moved > 1e-3 * std::max(1.0, std::fabs(converged.beta[j]))) out.push_back(j);
  }
  return out;
}

void check_boundary(const GlmProblem& p, const State& s, Irls& irls) {
  if (p.family == Family::gaussian) return;
  std::vector<Eigen::Index> diverging;
  if (irls.converged()) diverging = diverging_terms(s, irls.step(s));
  Eigen::Index at_boundary = 0;
  Eigen::Index first = -1;
  for (Eigen::Index i = 0; i < s.mu.size(); ++i) {
    // R's glm.fit warns at 10 eps: "fitted probabilities numerically 0 or 1 occurred".
    const bool edge = p.family == Family::binomial ? (s.mu[i] < 10 * kEps || s.mu[i] > 1.0 - 10 * kEps) : s.mu[i] < 10 * kEps;
    if (edge) {
      ++at_boundary;
      if (first < 0) first = i;
    }
  }
  if (at_boundary == 0 && diverging.empty() && !irls.weighted_rank_lost()) return;
  if (diverging.empty()) {
    Eigen::Index largest = 0;
    s.beta.cwiseAbs().maxCoeff(&largest);
    diverging.push_back(largest);
  }
  std::string terms;
  for (Eigen::Index j : diverging)
    terms += (terms.empty() ? "" : ", ") + ("\"" + p.term_names[static_cast<std::size_t>(j)] + "\" = " + significant(s.beta[j], 4));
  // Observations fitted (almost) exactly at the boundary: where the diverging terms act.
  if (at_boundary == 0)
    for (Eigen::Index i = 0; i < s.mu.size(); ++i)
      if (std::fabs(p.y[i] - s.mu[i]) < 1e-6 && (p.family == Family::poisson ? p.y[i] == 0.0 : true)) {
        ++at_boundary;
        if (first < 0) first = i;
      }
  const std::string where = at_boundary > 0 ? std::to_string(at_boundary) + " of " + std::to_string(s.mu.size()) +
                                                  " observations (first: " + observation_name(p, first) + ")"
                                            : "some observations";
  if (p.family == Family::binomial)
    throw InputError("the model cannot be fitted: the data are separated. Fitted probabilities are numerically 0 or 1 "
                     "at " + where + ", because some term (or combination of terms) splits presences from absences "
                     "perfectly, so its coefficient runs off to infinity (diverging: " + terms + "). Drop or merge the "
                     "separating term (e.g. a level with only presences or only absences), or add observations");
  throw InputError("the model cannot be fitted: fitted counts are numerically 0 at " + where +
                   ", because some term picks out observations that are all 0, so its coefficient runs off to minus "
                   "infinity (diverging: " + terms + "). Drop or merge that term (e.g. a level with only zero counts)");
}

}  // namespace

GlmFit fit_glm(const GlmProblem& problem, const IrlsOptions& options) {
  check_shapes(problem);
  const Eigen::Index n = problem.X.rows();
  const Eigen::Index p = problem.X.cols();
  const Eigen::VectorXd w = problem.weights.size() ? problem.weights : Eigen::VectorXd::Ones(n);
  const Eigen::VectorXd offset = problem.offset.size() ? problem.offset : Eigen::VectorXd::Zero(n);
  if (auto bad = check_response(problem.family, problem.link, problem.y, w))
    throw InputError(problem.observation_labels.empty() ? "observation " + std::to_string(bad->row + 1) + ": " + bad->why
                                                        : problem.observation_labels[static_cast<std::size_t>(bad->row)] + ": " + bad->why);
  check_aliasing(problem, w, options.alias_tolerance);

  Irls irls(problem, w, offset, options);
  const State s = irls.run();
  // Separation first: it is also the usual reason for non-convergence.
  check_boundary(problem, s, irls);
  if (!irls.converged())
    throw InputError("the model did not converge: IRLS stopped after " + std::to_string(irls.iterations()) +
                     " iterations with a relative deviance change of " + significant(irls.last_change(), 3) +
                     " (needs < " + significant(options.tolerance, 3) + "). Allow more iterations (--max-iterations), "
                     "standardise the covariates, or simplify the model");

  GlmFit fit;
  fit.coefficients = s.beta;
  fit.eta = s.eta;
  fit.mu = s.mu;
  fit.deviance = s.deviance;
  fit.iterations = irls.iterations();
  fit.covariance_weights = options.covariance;
  fit.tolerance = options.tolerance;
  fit.n = n;
  fit.df_residual = n - p;
  fit.df_null = n - (problem.intercept_column >= 0 ? 1 : 0);

  // Null deviance as R computes it: the weighted mean response with an intercept and no offset,
  // an intercept-only fit when there is an offset, the offset alone without an intercept.
  if (problem.intercept_column >= 0 && offset.isZero(0.0)) {
    const double mean = w.dot(problem.y) / w.sum();
    fit.null_deviance = family_deviance(problem.family, problem.y, Eigen::VectorXd::Constant(n, mean), w);
  } else if (problem.intercept_column >= 0) {
    const Eigen::MatrixXd ones = Eigen::MatrixXd::Ones(n, 1);
    Irls null_fit(problem, ones, w, offset, options);
    fit.null_deviance = null_fit.run().deviance;
  } else {
    Eigen::VectorXd mu0(n);
    for (Eigen::Index i = 0; i < n; ++i) mu0[i] = fitting_mu(problem.family, problem.link, offset[i]);
    fit.null_deviance = family_deviance(problem.family, problem.y, mu0, w);
  }

  const double family_part = family_aic(problem.family, problem.y, s.mu, w, s.deviance);
  fit.aic = family_part + 2.0 * static_cast<double>(p);
  // R's logLik.glm: (rank, + 1 for an estimated dispersion) - aic / 2.
  fit.dispersion_estimated = problem.family == Family::gaussian;
  fit.log_likelihood = static_cast<double>(p + (fit.dispersion_estimated ? 1 : 0)) - fit.aic / 2.0;
  // The state whose working weights enter the covariance (and, for gaussian, the dispersion).
  const State& weights_at = options.covariance == CovarianceWeights::last_iteration ? irls.previous() : s;
  if (fit.dispersion_estimated) {
    // summary.glm: sum of working weights x working residuals^2 over df. The working residual is
    // (y - mu) / (d mu / d eta) at the estimate; the weights are those the convention names (for
    // the identity link both are the prior weights, and this is the Pearson statistic).
    const Eigen::VectorXd sw = irls.working_sqrt_weights(weights_at);
    double pearson = 0.0;
    for (Eigen::Index i = 0; i < n; ++i) {
      const double r = (problem.y[i] - s.mu[i]) / fitting_mu_eta(problem.link, s.eta[i]);
      pearson += sw[i] * sw[i] * r * r;
    }
    fit.dispersion = pearson / static_cast<double>(fit.df_residual);
  }
  fit.covariance = fit.dispersion * irls.unscaled_covariance(weights_at);
  fit.covariance = (fit.covariance + fit.covariance.transpose()) / 2.0;  // exactly symmetric for the file
  fit.std_errors = fit.covariance.diagonal().cwiseMax(0.0).cwiseSqrt();
  return fit;
}

}  // namespace habcast
