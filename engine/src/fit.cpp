// The one entry point: prepare the window, run the chosen estimator, put the
// result in canonical form and back into return units, and attach statistics.
#include "factorwatch/engine/fit.h"

#include <chrono>
#include <cmath>
#include <stdexcept>
#include <unordered_map>

#include "canonical.h"
#include "chi_square.h"
#include "eigen_top.h"
#include "factorwatch/engine/factor_limit.h"
#include "max_likelihood.h"
#include "pca.h"
#include "prepare.h"
#include "principal_axis.h"

namespace factorwatch::engine {
namespace {

using detail::Estimate;
using detail::PreparedData;
using detail::SecondMoments;

using detail::kLog2Pi;
// Above this width the LR test's log|S| (a dense N x N factorisation) is skipped;
// the test needs n > N anyway, which wide panels never meet.
constexpr Eigen::Index kLikelihoodRatioMaxWidth = 4000;

// Maps a previous fit onto this window's assets, on the basis scale. Assets new to
// the window start with zero loadings and psi = s_ii: one EM step regresses them
// on the factor scores the matched assets imply.
bool warm_start_params(const WarmStart& w, const PreparedData& d, const SecondMoments& S,
                       Eigen::MatrixXd& L, Eigen::VectorXd& psi) {
  std::unordered_map<std::string, Eigen::Index> row;
  for (std::size_t i = 0; i < w.assets.size(); ++i) row.emplace(w.assets[i], Eigen::Index(i));
  const Eigen::Index N = S.size();
  L = Eigen::MatrixXd::Zero(N, w.loadings.cols());
  psi = S.diagonal();
  Eigen::Index matched = 0;
  for (Eigen::Index i = 0; i < N; ++i) {
    const auto it = row.find(d.assets[std::size_t(i)]);
    if (it == row.end()) continue;
    const double scale = d.basis_scale[i];
    const double p = w.specific_variance[it->second] / (scale * scale);
    if (!(p > 0) || !std::isfinite(p)) continue;
    L.row(i) = w.loadings.row(it->second) / scale;
    psi[i] = p;
    ++matched;
  }
  // Too little overlap says nothing about the new window's factors.
  return matched >= std::max<Eigen::Index>(w.loadings.cols() + 1, N / 2);
}

LikelihoodRatioTest likelihood_ratio_test(const SecondMoments& S, double loglik, double n, int k) {
  LikelihoodRatioTest t;
  const double p = double(S.size());
  t.dof = ((p - k) * (p - k) - p - k) / 2.0;
  if (!(t.dof > 0) || !(n > p) || S.size() > kLikelihoodRatioMaxWidth || !std::isfinite(loglik))
    return t;
  const Eigen::LLT<Eigen::MatrixXd> llt(S.dense());
  if (llt.info() != Eigen::Success) return t;
  const double log_det_s = 2.0 * llt.matrixLLT().diagonal().array().log().sum();
  // F = tr(Sigma^-1 S) - log det(Sigma^-1 S) - p, from the log-likelihood per observation.
  const double F = -2.0 * loglik - p * kLog2Pi - log_det_s - p;
  t.statistic = (n - 1.0 - (2.0 * p + 5.0) / 6.0 - 2.0 * k / 3.0) * F;  // Bartlett (1950)
  t.p_value = detail::chi_square_upper_tail(t.statistic, t.dof);
  t.defined = true;
  return t;
}

FactorFit fit_prepared(PreparedData d, const FitOptions& options,
                       std::chrono::steady_clock::time_point start) {
  FactorFit out;
  out.method = options.method;
  out.basis = options.basis;
  out.factors = options.factors;
  out.periods = d.periods;
  out.effective_sample_size = d.effective_sample_size;
  out.assets = d.assets;
  out.excluded = d.excluded;
  out.gap_handling = d.gap_handling;
  out.mean = d.mean;
  out.scale = d.variance.cwiseSqrt();

  const SecondMoments& S = *d.moments;
  const Eigen::Index N = S.size();
  const int k = options.factors;
  auto finish = [&](FactorFit& f) {
    f.fit_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    return f;
  };
  // More factors than the window identifies is refused before any estimation, naming
  // the limit (factor_limit.h); N counts the assets left after screening. A given matrix
  // has no dates: its observations stand for them.
  const std::string sample = S.panel() ? window_sample(N, d.periods)
                                       : "a covariance matrix of " + std::to_string(N) + " assets from " +
                                             std::to_string(d.periods) + " observations";
  if (const auto refused = too_many_factors(options.method, k, N, d.periods, sample)) {
    out.termination = Termination::not_identified;
    out.message = describe(*refused, refused->field);
    return finish(out);
  }

  const int wanted = options.eigenvalues_to_report > 0 ? options.eigenvalues_to_report : 2 * k + 10;
  const detail::TopEigen spectrum =
      detail::top_eigenpairs(S, std::max(wanted, k), k, nullptr, options.solver, options.seed);
  if (!spectrum.ok) {
    out.termination = Termination::numerical_failure;
    out.message = spectrum.problem;
    return finish(out);
  }
  out.trace = S.diagonal().sum();
  out.eigenvalues = spectrum.values.head(std::min<Eigen::Index>(wanted, spectrum.values.size()));

  Estimate e;
  switch (options.method) {
    case Method::pca:
      e = detail::pca_estimate(S, spectrum, k, options.specific_floor);
      break;
    case Method::principal_axis:
      e = detail::principal_axis_estimate(S, spectrum, options);
      break;
    case Method::max_likelihood: {
      Eigen::MatrixXd L;
      Eigen::VectorXd psi;
      bool warm = options.warm_start && warm_start_params(*options.warm_start, d, S, L, psi);
      if (!warm) detail::cold_start(S, spectrum, out.trace, k, L, psi);
      e = detail::ml_estimate(S, std::move(L), std::move(psi), options);
      e.warm_started = warm;
      e.solver_path = "EM (Woodbury form" + std::string(options.accelerate ? ", SQUAREM" : "") + ")" +
                      (e.newton_steps > 0 ? " then Newton on the likelihood concentrated in psi" : "") +
                      " over " + (S.panel() ? "the panel, one fused pass per step" : "the given matrix") +
                      "; eigenvalues by " + spectrum.path;
      if (warm) e.message += "; warm-started from the previous fit";
      break;
    }
  }
  out.termination = e.termination;
  out.message = e.message;
  out.iterations = e.iterations;
  out.em_passes = e.em_passes;
  out.newton_steps = e.newton_steps;
  out.profile_steps = e.profile_steps;
  out.largest_scaled_gradient = e.largest_scaled_gradient;
  if (options.method != Method::pca) out.tolerance = options.tolerance;
  out.converged = e.termination == Termination::converged;
  out.solver_path = e.solver_path;
  out.warm_started = e.warm_started;
  if (e.loadings.size() == 0 || !e.loadings.allFinite()) {
    out.termination = Termination::numerical_failure;
    out.converged = false;
    return finish(out);
  }

  if (options.method == Method::max_likelihood)
    detail::rotate_to_principal_axes(e.loadings, e.specific_variance);
  detail::order_and_fix_signs(e.loadings);

  out.log_likelihood = detail::log_likelihood(S, e.loadings, e.specific_variance);
  if (options.method == Method::max_likelihood)
    out.lr_test = likelihood_ratio_test(S, out.log_likelihood, d.effective_sample_size, k);
  out.explained_share = e.loadings.colwise().squaredNorm().transpose() / out.trace;
  out.explained_total = out.explained_share.sum();
  out.uniqueness = e.specific_variance.cwiseQuotient(S.diagonal());

  // Back to return units: the basis scale multiplies rows of L, and psi by its square.
  out.loadings = d.basis_scale.asDiagonal() * e.loadings;
  out.specific_variance = e.specific_variance.cwiseProduct(d.basis_scale.cwiseAbs2());
  out.communality = out.loadings.rowwise().squaredNorm();
  out.factor_covariance = Eigen::MatrixXd::Identity(k, k);
  out.heywood = e.heywood;
  return finish(out);
}

template <typename Input>
FactorFit fit_any(const Input& input, const FitOptions& options) {
  std::string error;
  if (!options.IsValid(&error)) throw std::invalid_argument(error);
  const auto start = std::chrono::steady_clock::now();
  return fit_prepared(detail::prepare(input, options), options, start);
}

}  // namespace

FactorFit fit(const ReturnsPanel& panel, const FitOptions& options) {
  if (panel.values.rows() != Eigen::Index(panel.dates.size()) ||
      panel.values.cols() != Eigen::Index(panel.assets.size()))
    throw std::invalid_argument("returns panel: values are " + std::to_string(panel.values.rows()) +
                                " x " + std::to_string(panel.values.cols()) + " but there are " +
                                std::to_string(panel.dates.size()) + " dates and " +
                                std::to_string(panel.assets.size()) + " assets");
  return fit_any(panel, options);
}

FactorFit fit(const CovarianceInput& input, const FitOptions& options) {
  if (input.matrix.rows() != input.matrix.cols() ||
      input.matrix.rows() != Eigen::Index(input.assets.size()))
    throw std::invalid_argument("covariance input: matrix is " + std::to_string(input.matrix.rows()) +
                                " x " + std::to_string(input.matrix.cols()) + " for " +
                                std::to_string(input.assets.size()) + " assets");
  if (!(input.observations > 1))
    throw std::invalid_argument("covariance input: observations must be more than 1");
  return fit_any(input, options);
}

}  // namespace factorwatch::engine
