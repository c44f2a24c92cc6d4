// Maximum likelihood at the settings a user gets: "converged" must mean near the optimum.
//
// References, each run to full convergence by R 4.2.2 stats::factanal with
// control = list(nstart = 1, lower = 0.005, opt = list(factr = 1, pgtol = 0, maxit = 10000)):
//  - Harman74.cor (R's datasets; Holzinger and Swineford 1939, 24 tests, n = 145), k = 1..5:
//    tests/reference/make_harman74.R; R's own spread over 50 random starts 3.3e-8.
//  - ability.cov (R's datasets; six tests, n = 112), k = 1, 2: make_ability.R. At k = 2 the
//    uniqueness of 'reading' is 0.052, near the 0.005 bound, where EM is slowest; R's spread
//    over 50 starts 2.2e-9, its default control stops 1.1e-5 away.
//  - daily log returns of R's EuStockMarkets (real returns), k = 1, the whole sample and two
//    consecutive 500-date windows: make_eustock_ml.R.
// Target (the ML stopping-rule issue): every uniqueness within 1e-6 of these at default
// FitOptions, cold and warm, with and without the Newton stage (the EM-only path is what
// universes above the Newton stage's width get).
#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "eustock_returns.h"
#include "factorwatch/engine/fit.h"
#include "factorwatch/storage/covariance_csv.h"
#include "reference_table.h"
#include "simulated_model.h"

namespace {

using namespace factorwatch::engine;
using factorwatch::testing::read_reference;

constexpr double kTarget = 1e-6;

// The reference matrices are in the project's matrix file format ('#' provenance lines).
CovarianceInput covariance_from(const std::string& file, double observations) {
  return factorwatch::storage::read_covariance_csv(std::string(FACTORWATCH_REFERENCE_DIR) + "/" + file, observations);
}

FitOptions defaults(int k, bool polish) {
  FitOptions o;  // everything at its default but the model's size
  o.method = Method::max_likelihood;
  o.factors = k;
  o.polish = polish;
  return o;
}

// Largest |u_ours - u_R| over the rows of `file` whose `sample` column is `sample` (all rows
// when the file has no such column).
double worst_uniqueness_gap(const FactorFit& f, const std::string& file, const std::string& sample = "") {
  const auto ref = read_reference(file);
  double worst = 0;
  std::size_t seen = 0;
  for (std::size_t r = 0; r < ref.rows.size(); ++r) {
    if (!sample.empty() && ref.text(r, "sample") != sample) continue;
    EXPECT_EQ(ref.text(r, "variable"), f.assets.at(seen));
    worst = std::max(worst, std::abs(f.uniqueness[Eigen::Index(seen)] - ref.number(r, "uniqueness")));
    ++seen;
  }
  EXPECT_EQ(seen, f.assets.size());
  return worst;
}

void expect_converged_with_evidence(const FactorFit& f, double tolerance) {
  ASSERT_EQ(f.termination, Termination::converged) << f.message;
  EXPECT_TRUE(f.converged);
  ASSERT_TRUE(std::isfinite(f.largest_scaled_gradient));
  EXPECT_LE(f.largest_scaled_gradient, tolerance);
  EXPECT_EQ(f.iterations, f.em_passes + f.newton_steps + f.profile_steps);
}

struct Case {
  int factors;
  bool polish;
};
std::string case_name(const ::testing::TestParamInfo<Case>& info) {
  return "k" + std::to_string(info.param.factors) + (info.param.polish ? "_em_then_newton" : "_em_only");
}

class Harman74AtDefaults : public ::testing::TestWithParam<Case> {};
TEST_P(Harman74AtDefaults, UniquenessesWithinOneMillionthOfFactanalTight) {
  const auto [k, polish] = GetParam();
  const FactorFit f = fit(covariance_from("harman74_cor.csv", 145), defaults(k, polish));
  expect_converged_with_evidence(f, FitOptions{}.tolerance);
  const double gap = worst_uniqueness_gap(f, "harman74_factanal_k" + std::to_string(k) + ".csv");
  EXPECT_LT(gap, kTarget) << f.message;
  if (polish) {
    EXPECT_GT(f.newton_steps, 0) << "24 assets are within the Newton stage's width";
  }
}
INSTANTIATE_TEST_SUITE_P(FactorsOneToFive, Harman74AtDefaults,
                         ::testing::Values(Case{1, true}, Case{2, true}, Case{3, true}, Case{4, true}, Case{5, true},
                                           Case{1, false}, Case{2, false}, Case{3, false}, Case{4, false},
                                           Case{5, false}),
                         case_name);

class AbilityAtDefaults : public ::testing::TestWithParam<Case> {};
TEST_P(AbilityAtDefaults, UniquenessesWithinOneMillionthOfFactanalTight) {
  const auto [k, polish] = GetParam();
  const FactorFit f = fit(covariance_from("ability_cov.csv", 112), defaults(k, polish));
  expect_converged_with_evidence(f, FitOptions{}.tolerance);
  EXPECT_LT(worst_uniqueness_gap(f, "ability_factanal_k" + std::to_string(k) + ".csv"), kTarget) << f.message;
}
INSTANTIATE_TEST_SUITE_P(NearTheHeywoodBoundary, AbilityAtDefaults,
                         ::testing::Values(Case{1, true}, Case{2, true}, Case{1, false}, Case{2, false}), case_name);

// The reproduction from the issue: ability.cov, k = 2, stopped 8.2e-4 from the optimum at the
// default tolerance under the old rule (relative change of the log-likelihood) while
// reporting "converged". Loadings too (R's columns up to sign; k = 2 unrotated).
TEST(AbilityAtDefaults, IssueReproductionLoadingsToo) {
  const FactorFit f = fit(covariance_from("ability_cov.csv", 112), defaults(2, true));
  ASSERT_TRUE(f.converged);
  const auto ref = read_reference("ability_factanal_k2.csv");
  const Eigen::MatrixXd ours = f.standardized_loadings();
  for (int j = 0; j < 2; ++j) {
    double plus = 0, minus = 0;
    for (std::size_t i = 0; i < ref.rows.size(); ++i) {
      const double r = ref.number(i, "f" + std::to_string(j + 1));
      plus = std::max(plus, std::abs(ours(Eigen::Index(i), j) - r));
      minus = std::max(minus, std::abs(ours(Eigen::Index(i), j) + r));
    }
    EXPECT_LT(std::min(plus, minus), 1e-5) << "factor " << j + 1;
  }
  // Lawley and Maxwell (1971): at an interior optimum diag(L L' + Psi) = diag(S).
  const Eigen::VectorXd s = f.scale.cwiseAbs2();
  EXPECT_LT(((f.communality + f.specific_variance).cwiseQuotient(s).array() - 1.0).abs().maxCoeff(), 1e-6);
}

ReturnsPanel rows_of(const ReturnsPanel& all, Eigen::Index first, Eigen::Index count) {
  ReturnsPanel p;
  p.assets = all.assets;
  p.dates.assign(all.dates.begin() + first, all.dates.begin() + first + count);
  p.values = all.values.middleRows(first, count);
  return p;
}

class EuStockAtDefaults : public ::testing::TestWithParam<bool> {};
TEST_P(EuStockAtDefaults, RealReturnsOnBothBasesMatchFactanalTight) {
  const ReturnsPanel all = factorwatch::testing::eustock_returns();
  for (Basis basis : {Basis::covariance, Basis::correlation}) {
    FitOptions o = defaults(1, GetParam());
    o.basis = basis;
    const FactorFit f = fit(all, o);
    expect_converged_with_evidence(f, o.tolerance);
    EXPECT_LT(worst_uniqueness_gap(f, "eustock_factanal_k1.csv", "all"), kTarget) << to_string(basis);
  }
}

// Consecutive windows (rows 1-500, then 2-501): the warm-started refit of the second window
// lands on the same optimum as its cold fit and as R, and in fewer iterations.
TEST_P(EuStockAtDefaults, WarmStartedNextWindowReachesTheSameOptimum) {
  const ReturnsPanel all = factorwatch::testing::eustock_returns();
  FitOptions o = defaults(1, GetParam());
  const FactorFit first = fit(rows_of(all, 0, 500), o);
  expect_converged_with_evidence(first, o.tolerance);
  EXPECT_LT(worst_uniqueness_gap(first, "eustock_factanal_k1.csv", "first500"), kTarget);

  const ReturnsPanel next = rows_of(all, 1, 500);
  const FactorFit cold = fit(next, o);
  o.warm_start = WarmStart{first.assets, first.loadings, first.specific_variance};
  const FactorFit warm = fit(next, o);
  ASSERT_TRUE(warm.warm_started);
  expect_converged_with_evidence(cold, o.tolerance);
  expect_converged_with_evidence(warm, o.tolerance);
  EXPECT_LT(worst_uniqueness_gap(cold, "eustock_factanal_k1.csv", "second500"), kTarget);
  EXPECT_LT(worst_uniqueness_gap(warm, "eustock_factanal_k1.csv", "second500"), kTarget);
  EXPECT_LT((warm.uniqueness - cold.uniqueness).cwiseAbs().maxCoeff(), kTarget);
  EXPECT_LT(warm.iterations, cold.iterations);
}
INSTANTIATE_TEST_SUITE_P(BothPaths, EuStockAtDefaults, ::testing::Values(true, false),
                         [](const ::testing::TestParamInfo<bool>& i) {
                           return std::string(i.param ? "em_then_newton" : "em_only");
                         });

// The iteration limit is its own termination: never "converged", and the criterion it
// stopped at is reported (above the tolerance).
TEST(StoppingRule, IterationLimitIsNotConvergence) {
  FitOptions o = defaults(2, true);
  o.max_iterations = 3;
  const FactorFit f = fit(covariance_from("ability_cov.csv", 112), o);
  EXPECT_EQ(f.termination, Termination::iteration_limit);
  EXPECT_FALSE(f.converged);
  ASSERT_TRUE(std::isfinite(f.largest_scaled_gradient));
  EXPECT_GT(f.largest_scaled_gradient, o.tolerance);
  EXPECT_LE(f.iterations, 3);
}

// The limit counts every step on the wide path too, where the fixed point in psi runs
// first: a limit of 3 used to allow 5 (two profile steps, then a whole SQUAREM cycle of
// three EM passes). Planted data, 260 assets (above the polishing width of 200).
TEST(StoppingRule, TheIterationLimitHoldsOnTheWidePath) {
  const auto planted = factorwatch::testing::simulate_planted_model(150, 260, 3, 20261205u);
  for (int limit : {2, 3, 4, 5, 7, 12}) {
    FitOptions o = defaults(3, true);
    o.max_iterations = limit;
    const FactorFit f = fit(planted.panel, o);
    EXPECT_LE(f.iterations, limit) << f.message;
    EXPECT_EQ(f.iterations, f.em_passes + f.newton_steps + f.profile_steps);
    if (f.iterations < limit) {
      EXPECT_EQ(f.termination, Termination::converged) << "limit " << limit;
    }
  }
}

// The reported criterion belongs to the returned estimate: re-measured there (a warm start
// from it, one pass) it is the same number. The estimate comes back rotated to principal
// axes, so this also checks that the criterion does not depend on the factors' rotation.
TEST(StoppingRule, ReportedCriterionIsTheReturnedEstimates) {
  const CovarianceInput in = covariance_from("ability_cov.csv", 112);
  for (int limit : {2, 5, 9}) {
    FitOptions o = defaults(2, false);
    o.max_iterations = limit;
    const FactorFit stopped = fit(in, o);
    ASSERT_EQ(stopped.termination, Termination::iteration_limit);
    o.max_iterations = 1;
    o.warm_start = WarmStart{stopped.assets, stopped.loadings, stopped.specific_variance};
    const FactorFit remeasured = fit(in, o);
    ASSERT_TRUE(remeasured.warm_started);
    EXPECT_NEAR(remeasured.largest_scaled_gradient, stopped.largest_scaled_gradient,
                1e-9 * stopped.largest_scaled_gradient) << "limit " << limit;
  }
}

// A tighter tolerance is honoured and gets closer (the criterion bounds the distance).
TEST(StoppingRule, TighterToleranceIsMetAndReported) {
  FitOptions o = defaults(2, false);
  o.tolerance = 1e-11;
  const FactorFit f = fit(covariance_from("ability_cov.csv", 112), o);
  expect_converged_with_evidence(f, 1e-11);
  EXPECT_LT(worst_uniqueness_gap(f, "ability_factanal_k2.csv"), 1e-8);
}

// PCA and principal axis have no gradient criterion: NaN, not a made-up number.
TEST(StoppingRule, OtherMethodsReportNoGradient) {
  for (Method m : {Method::pca, Method::principal_axis}) {
    FitOptions o = defaults(2, true);
    o.method = m;
    const FactorFit f = fit(covariance_from("ability_cov.csv", 112), o);
    EXPECT_TRUE(std::isnan(f.largest_scaled_gradient)) << to_string(m);
  }
}

}  // namespace
