// Behaviour around the estimators: screening, gaps, weights, Heywood cases, warm
// starts, canonical signs, option validation. Planted-structure data throughout.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "factorwatch/engine/fit.h"
#include "eigen_top.h"
#include "max_likelihood.h"
#include "ml_profiled.h"
#include "prepare.h"
#include "simulated_model.h"
#include "weights.h"

namespace {

using namespace factorwatch::engine;
using factorwatch::testing::simulate_planted_model;
constexpr double kGap = std::numeric_limits<double>::quiet_NaN();

FitOptions ml(int k) {
  FitOptions o;
  o.factors = k;
  return o;
}

// Kish's effective sample size (sum w)^2 / sum w^2 for geometric weights
// w_t = lambda^(T-1-t) has the closed form (1 - l^T)^2 (1 + l) / ((1 - l)(1 - l^2T))
// (sums of geometric series; Kish 1965, Survey Sampling, design effect of weighting).
TEST(Weights, EffectiveSampleSizeOfExponentialWeights) {
  const int T = 500;
  const double half_life = 63;
  const double l = std::pow(0.5, 1.0 / half_life);
  const double expected = std::pow(1 - std::pow(l, T), 2) * (1 + l) / ((1 - l) * (1 - std::pow(l, 2 * T)));
  const Eigen::VectorXd w = factorwatch::engine::detail::observation_weights(T, Weighting::ewma, half_life);
  EXPECT_NEAR(w.sum(), 1.0, 1e-14);
  EXPECT_NEAR(w[T - 1] / w[T - 1 - 63], 2.0, 1e-12);  // one half-life back weighs half
  EXPECT_NEAR(factorwatch::engine::detail::effective_sample_size(w), expected, 1e-9 * expected);
  const Eigen::VectorXd e = factorwatch::engine::detail::observation_weights(T, Weighting::equal, 0);
  EXPECT_NEAR(factorwatch::engine::detail::effective_sample_size(e), T, 1e-9);
}

TEST(Weights, FitReportsTheEffectiveSampleSize) {
  const auto m = simulate_planted_model(400, 20, 2, 7);
  FitOptions o = ml(2);
  o.weighting = Weighting::ewma;
  o.half_life = 40;
  const FactorFit f = fit(m.panel, o);
  EXPECT_EQ(f.periods, 400);
  EXPECT_GT(f.effective_sample_size, 100);
  EXPECT_LT(f.effective_sample_size, 130);  // about 2.885 half-lives = 115 for a long window
  ASSERT_TRUE(f.converged);
}

TEST(Screening, LowCoverageAndConstantSeriesAreExcludedWithReasons) {
  auto m = simulate_planted_model(300, 20, 2, 8);
  for (int t = 0; t < 200; ++t) m.panel.values(t, 4) = kGap;  // coverage 1/3
  m.panel.values.col(7).setConstant(0.001);                    // constant series
  const FactorFit f = fit(m.panel, ml(2));
  ASSERT_EQ(f.excluded.size(), 2u);
  EXPECT_EQ(f.excluded[0].asset, m.panel.assets[4]);
  EXPECT_NE(f.excluded[0].reason.find("coverage 0.333"), std::string::npos) << f.excluded[0].reason;
  EXPECT_EQ(f.excluded[1].asset, m.panel.assets[7]);
  EXPECT_NE(f.excluded[1].reason.find("constant"), std::string::npos);
  EXPECT_EQ(f.assets.size(), 18u);
  EXPECT_EQ(f.loadings.rows(), 18);
}

// With gaps, each variance uses the asset's observed dates only (stated rule in
// prepare.h): the fitted diag(Sigma) reproduces those variances at the ML optimum.
TEST(Gaps, VariancesUseObservedDatesOnly) {
  auto m = simulate_planted_model(600, 15, 2, 9);
  for (int t = 0; t < 600; t += 7) m.panel.values(t, 2) = kGap;
  for (int t = 100; t < 160; ++t) m.panel.values(t, 5) = kGap;
  FitOptions o = ml(2);
  o.tolerance = 1e-13;
  o.max_iterations = 100000;
  const FactorFit f = fit(m.panel, o);
  ASSERT_TRUE(f.converged);
  for (int i : {2, 5}) {
    double sum = 0, sum2 = 0, n = 0;
    for (int t = 0; t < 600; ++t) {
      const double x = m.panel.values(t, i);
      if (std::isnan(x)) continue;
      sum += x;
      n += 1;
    }
    const double mean = sum / n;
    for (int t = 0; t < 600; ++t) {
      const double x = m.panel.values(t, i);
      if (!std::isnan(x)) sum2 += (x - mean) * (x - mean);
    }
    EXPECT_NEAR(f.mean[i], mean, 1e-15);
    EXPECT_NEAR(f.scale[i] * f.scale[i], sum2 / n, 1e-12 * sum2 / n);
    EXPECT_NEAR(f.communality[i] + f.specific_variance[i], sum2 / n, 1e-6 * sum2 / n);
  }
  EXPECT_NE(f.gap_handling.find("mean"), std::string::npos);
}

// An asset that is almost an exact copy of a factor has (nearly) no specific
// variance: ML drives psi to the floor, which must be flagged, not hidden.
TEST(Heywood, NearZeroSpecificVarianceIsFlooredAndFlagged) {
  auto m = simulate_planted_model(800, 12, 1, 10);
  for (int t = 0; t < 800; ++t) m.panel.values(t, 0) = 0.01 * m.factors(t, 0) + 1e-7 * std::sin(t);
  FitOptions o = ml(1);
  o.specific_floor = 0.005;
  const FactorFit f = fit(m.panel, o);
  ASSERT_TRUE(f.IsSolutionUsable());
  EXPECT_TRUE(f.heywood[0]);
  EXPECT_NEAR(f.uniqueness[0], 0.005, 1e-12);
  for (std::size_t i = 1; i < f.heywood.size(); ++i) EXPECT_FALSE(f.heywood[i]) << i;
}

// Rolling windows overlap: a fit warm-started from yesterday's converges to the same
// optimum as a cold one at the default tolerance. Up to the Newton stage's width (200
// assets) it takes no more iterations (7 and 7 at N = 150 here: a cold start reaches
// Newton's region in a few EM passes too). EM alone (wider universes) reaches the optimum
// as well, but at the gradient rule a warm start does not save passes: EM's slow
// directions dominate either way (at N = 300 here, 67 passes warm against 58 cold). The
// old rule (relative change of the log-likelihood) showed fewer passes only because it
// stopped both fits early. Speed is the benchmark's business (bench/fit_bench.cpp, ml-warm).
// Two windows a date apart: all but the last date, and all but the first.
std::pair<ReturnsPanel, ReturnsPanel> consecutive_windows(const ReturnsPanel& all) {
  const Eigen::Index periods = all.values.rows() - 1;
  ReturnsPanel yesterday = all, today = all;
  yesterday.values = all.values.topRows(periods);
  yesterday.dates.pop_back();
  today.values = all.values.bottomRows(periods);
  today.dates.erase(today.dates.begin());
  return {yesterday, today};
}

class WarmStarted : public ::testing::TestWithParam<int> {};
TEST_P(WarmStarted, ReachesTheColdOptimum) {
  const int assets = GetParam();
  const auto [yesterday, today] = consecutive_windows(simulate_planted_model(701, assets, 6, 12).panel);
  FitOptions o = ml(6);
  const FactorFit prior = fit(yesterday, o);
  const FactorFit cold = fit(today, o);
  o.warm_start = WarmStart{prior.assets, prior.loadings, prior.specific_variance};
  const FactorFit warm = fit(today, o);
  ASSERT_TRUE(cold.converged && warm.converged);
  EXPECT_TRUE(warm.warm_started);
  EXPECT_NEAR(warm.log_likelihood, cold.log_likelihood, 1e-10 * std::abs(cold.log_likelihood));
  EXPECT_LT((warm.uniqueness - cold.uniqueness).cwiseAbs().maxCoeff(), 1e-6);
  if (assets <= 200) {
    EXPECT_GT(warm.newton_steps, 0);
    EXPECT_LE(warm.iterations, cold.iterations) << "warm " << warm.em_passes << " + " << warm.newton_steps
                                                << ", cold " << cold.em_passes << " + " << cold.newton_steps;
  }
}
INSTANTIATE_TEST_SUITE_P(NewtonStageAndEmAlone, WarmStarted, ::testing::Values(150, 300));

// Wide universes (above the Newton stage's 200 assets) start with the fixed point in psi
// alone (ml_profiled.h): it must land on the optimum plain EM reaches (no acceleration, no
// profile stage), with T above N and below it, cold and warm.
class ProfiledFixedPoint : public ::testing::TestWithParam<std::pair<int, int>> {};
TEST_P(ProfiledFixedPoint, ReachesThePlainEmOptimum) {
  const auto [periods, assets] = GetParam();
  const auto [yesterday, today] = consecutive_windows(simulate_planted_model(periods + 1, assets, 4, 21).panel);
  FitOptions o = ml(4);
  const FactorFit fast = fit(today, o);
  ASSERT_TRUE(fast.converged) << fast.message;
  EXPECT_GT(fast.profile_steps, 0);
  EXPECT_LE(fast.largest_scaled_gradient, o.tolerance);
  EXPECT_EQ(fast.iterations, fast.em_passes + fast.newton_steps + fast.profile_steps);
  FitOptions plain = o;
  plain.accelerate = false;
  plain.max_iterations = 200000;
  const FactorFit reference = fit(today, plain);
  ASSERT_TRUE(reference.converged) << reference.message;
  EXPECT_EQ(reference.profile_steps, 0);
  EXPECT_LT((fast.uniqueness - reference.uniqueness).cwiseAbs().maxCoeff(), 1e-6);
  EXPECT_NEAR(fast.log_likelihood, reference.log_likelihood, 1e-9 * std::abs(reference.log_likelihood));
  const FactorFit prior = fit(yesterday, o);
  o.warm_start = WarmStart{prior.assets, prior.loadings, prior.specific_variance};
  const FactorFit warm = fit(today, o);
  ASSERT_TRUE(warm.converged && warm.warm_started);
  EXPECT_LT((warm.uniqueness - reference.uniqueness).cwiseAbs().maxCoeff(), 1e-6);
}
// The safeguard's likelihood comes from the top-k eigenvalues of Psi^-1/2 S Psi^-1/2 alone
// (ml_profiled.h); it must equal the full Woodbury-form likelihood at (L(psi), psi),
// including a psi at which some eigenvalues fall below 1 (their factor drops out).
TEST(ProfiledFixedPoint, EigenvalueLikelihoodEqualsTheFullOne) {
  const auto m = simulate_planted_model(300, 500, 4, 8);
  FitOptions o = ml(6);
  const detail::PreparedData d = detail::prepare(m.panel, o);
  const detail::SecondMoments& S = *d.moments;
  const RowMatrix& X = *S.panel();
  for (double share : {0.3, 0.9, 4.0}) {
    const Eigen::VectorXd psi = share * S.diagonal();
    RowMatrix scratch;
    const detail::DenseMoments G(detail::scaled_gram_matrix(X, psi.cwiseInverse(), scratch));
    const detail::TopEigen top = detail::top_eigenpairs(G, 6, 6, nullptr, SolverChoice::dense, 1);
    ASSERT_TRUE(top.ok);
    Eigen::MatrixXd L = X.transpose() * top.vectors;
    for (int j = 0; j < 6; ++j) L.col(j) *= std::sqrt(std::max(top.values[j] - 1.0, 0.0) / top.values[j]);
    if (share == 4.0) {
      EXPECT_LT(top.values[5], 1.0) << "the case where factors drop out";
    }
    const double full = detail::log_likelihood(S, L, psi);
    EXPECT_NEAR(detail::profiled_log_likelihood(top.values, psi, S.diagonal()), full, 1e-11 * std::abs(full));
  }
}

INSTANTIATE_TEST_SUITE_P(LongAndWidePanels, ProfiledFixedPoint,
                         ::testing::Values(std::make_pair(600, 250), std::make_pair(150, 400)));

// Canonical form (stated rule): factors ordered by variance explained; each column's sum is positive.
TEST(Canonical, OrderedByVarianceWithPositiveColumnSums) {
  const auto m = simulate_planted_model(1000, 40, 3, 13);
  for (Method method : {Method::pca, Method::principal_axis, Method::max_likelihood}) {
    FitOptions o = ml(3);
    o.method = method;
    const FactorFit f = fit(m.panel, o);
    for (int j = 0; j < 3; ++j) {
      EXPECT_GT(f.loadings.col(j).sum(), 0) << to_string(method);
      if (j > 0) {
        EXPECT_GE(f.explained_share[j - 1], f.explained_share[j]);
      }
    }
  }
}

TEST(Options, InvalidOptionsNameTheFieldAndThrow) {
  FitOptions o;
  std::string error;
  o.factors = 0;
  EXPECT_FALSE(o.IsValid(&error));
  EXPECT_NE(error.find("'factors' = 0"), std::string::npos) << error;
  o = FitOptions{};
  o.weighting = Weighting::ewma;
  EXPECT_FALSE(o.IsValid(&error));
  EXPECT_NE(error.find("half_life"), std::string::npos);
  o.half_life = 10;
  EXPECT_TRUE(o.IsValid(&error));
  o.min_coverage = 1.5;
  EXPECT_THROW(fit(simulate_planted_model(50, 5, 1, 1).panel, o), std::invalid_argument);
}

TEST(Options, TooFewAssetsIsAResultNotACrash) {
  const auto m = simulate_planted_model(100, 4, 1, 14);
  FitOptions o = ml(3);
  const FactorFit f = fit(m.panel, o);
  // 4 assets identify one factor by ML (Ledermann bound, tests/factor_limit_test.cpp).
  EXPECT_EQ(f.termination, Termination::not_identified);
  EXPECT_FALSE(f.IsSolutionUsable());
  EXPECT_NE(f.message.find("a window of 4 assets and 100 dates identifies at most 1 factor by maximum likelihood"),
            std::string::npos)
      << f.message;
}

}  // namespace
