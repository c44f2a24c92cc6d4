// How many factors a window identifies (engine/factor_limit.h), and that a fit asking for
// more stops before estimating, with the reason in its message.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "factorwatch/engine/factor_limit.h"
#include "factorwatch/engine/fit.h"
#include "simulated_model.h"

namespace {

using namespace factorwatch::engine;
using factorwatch::testing::simulate_planted_model;

FitOptions options(Method method, int k) {
  FitOptions o;
  o.method = method;
  o.factors = k;
  return o;
}

// Ledermann (1937): k <= ((2p + 1) - sqrt(8p + 1)) / 2 for p variables, the condition
// that the likelihood-ratio test's degrees of freedom ((p - k)^2 - (p + k)) / 2 are not
// negative. The values below are the formula's, worked by hand: p = 3: (7 - 5) / 2 = 1;
// p = 5: (11 - 6.40) / 2 = 2.30 -> 2; p = 6: (13 - 7) / 2 = 3; p = 10: (21 - 9) / 2 = 6;
// p = 30: (61 - 15.52) / 2 = 22.74 -> 22.
TEST(FactorLimit, LedermannBoundAtSmallP) {
  EXPECT_EQ(ledermann_bound(1), 0);
  EXPECT_EQ(ledermann_bound(2), 0);  // (5 - 4.12) / 2 = 0.44
  EXPECT_EQ(ledermann_bound(3), 1);
  EXPECT_EQ(ledermann_bound(5), 2);
  EXPECT_EQ(ledermann_bound(6), 3);
  EXPECT_EQ(ledermann_bound(10), 6);
  EXPECT_EQ(ledermann_bound(30), 22);
}

// The closed form (Ledermann 1937) against the integer search for every p up to 2000,
// and the degrees of freedom on either side of the bound: >= 0 at it, < 0 one above.
// R's stats::factanal refuses k exactly when 0.5 ((p - k)^2 - p - k) < 0 ("%d factors
// are too many for %d variables"; its source as printed from R, read in a public copy:
// HazelnutParadise/insyra, stats/internal/fa/r_source_code/psych_factanal.R).
TEST(FactorLimit, LedermannBoundIsTheClosedFormAndTheDegreesOfFreedomRule) {
  for (long long p = 1; p <= 2000; ++p) {
    const double closed = ((2.0 * p + 1) - std::sqrt(8.0 * p + 1)) / 2;
    // Where the closed form is a whole number (8p + 1 a square) floor must not fall below it.
    const int expected = static_cast<int>(std::floor(closed + 1e-9));
    ASSERT_EQ(ledermann_bound(p), expected) << "p = " << p;
    const long long k = ledermann_bound(p);
    EXPECT_GE((p - k) * (p - k) - (p + k), 0) << "p = " << p;
    if (k < p) {
      EXPECT_LT((p - k - 1) * (p - k - 1) - (p + k + 1), 0) << "p = " << p;
    }
  }
}

// Every method: a centred window of T dates and N assets has rank at most min(N, T - 1),
// and each asset keeps a specific part, so k <= min(N, T) - 1 (common practice, derived
// in docs/methodology.md). Maximum likelihood adds the Ledermann bound when it is lower.
TEST(FactorLimit, EveryMethodStopsBelowTheAssetsAndTheDates) {
  EXPECT_EQ(factor_limit(Method::pca, 30, 20).most, 19);
  EXPECT_EQ(factor_limit(Method::pca, 30, 252).most, 29);
  EXPECT_EQ(factor_limit(Method::principal_axis, 30, 252).most, 29);
  EXPECT_FALSE(factor_limit(Method::pca, 30, 252).ledermann);
  EXPECT_EQ(factor_limit(Method::max_likelihood, 30, 252).most, 22);
  EXPECT_TRUE(factor_limit(Method::max_likelihood, 30, 252).ledermann);
  EXPECT_EQ(factor_limit(Method::max_likelihood, 30, 10).most, 9);  // the dates bind first
  EXPECT_FALSE(factor_limit(Method::max_likelihood, 30, 10).ledermann);
  EXPECT_EQ(factor_limit(Method::pca, 1, 252).most, 0);
}

TEST(FactorLimit, TheRefusalNamesTheFactorsTheWindowAndTheLimit) {
  EXPECT_FALSE(too_many_factors(Method::max_likelihood, 22, 30, 252, window_sample(30, 252)));
  const auto f = too_many_factors(Method::max_likelihood, 40, 30, 252, window_sample(30, 252));
  ASSERT_TRUE(f);
  EXPECT_EQ(f->kind, FailureKind::bad_input);
  EXPECT_EQ(f->field, "factors");
  EXPECT_EQ(describe(*f, f->field),
            "factors = 40: a window of 30 assets and 252 dates identifies at most 22 factors by maximum likelihood "
            "(Ledermann bound); choose 22 factors or fewer");
  const auto t = too_many_factors(Method::pca, 20, 30, 20, window_sample(30, 20));
  ASSERT_TRUE(t);
  EXPECT_EQ(t->rule,
            "a window of 30 assets and 20 dates identifies at most 19 factors (at most one fewer than its assets and "
            "than its dates); choose 19 factors or fewer");
  const auto none = too_many_factors(Method::max_likelihood, 1, 2, 252, window_sample(2, 252));
  ASSERT_TRUE(none);
  EXPECT_EQ(none->rule, "a window of 2 assets and 252 dates identifies no factor by maximum likelihood (Ledermann bound)");
}

// The reproduction of issue 16 in the engine: 30 assets, 252 dates, 40 factors by maximum
// likelihood. The fit stops before estimating with a termination of its own and the
// reason; before, it was an opaque numerical failure.
TEST(FactorLimit, AFitAskingForTooManyFactorsSaysWhy) {
  const auto m = simulate_planted_model(252, 30, 3, 16);
  const FactorFit f = fit(m.panel, options(Method::max_likelihood, 40));
  EXPECT_EQ(f.termination, Termination::not_identified);
  EXPECT_FALSE(f.IsSolutionUsable());
  EXPECT_EQ(f.iterations, 0);
  EXPECT_EQ(f.message,
            "factors = 40: a window of 30 assets and 252 dates identifies at most 22 factors by maximum likelihood "
            "(Ledermann bound); choose 22 factors or fewer");
  // One above the Ledermann bound is refused; at the bound the estimator runs.
  EXPECT_EQ(fit(m.panel, options(Method::max_likelihood, 23)).termination, Termination::not_identified);
  // One iteration shows the estimator ran: a full fit at zero degrees of freedom takes
  // minutes (more so under the sanitizers) and its result is not what this test is about.
  FitOptions at_bound = options(Method::max_likelihood, 22);
  at_bound.max_iterations = 1;
  EXPECT_NE(fit(m.panel, at_bound).termination, Termination::not_identified);
}

// The dates' rule: 12 dates identify at most 11 factors, whatever the assets; and as many
// principal components as assets leave no specific part.
TEST(FactorLimit, ShortWindowsAndAsManyComponentsAsAssetsAreRefused) {
  const auto m = simulate_planted_model(12, 30, 2, 17);
  const FactorFit f = fit(m.panel, options(Method::pca, 12));
  EXPECT_EQ(f.termination, Termination::not_identified);
  EXPECT_NE(f.message.find("a window of 30 assets and 12 dates identifies at most 11 factors"), std::string::npos)
      << f.message;
  EXPECT_TRUE(fit(m.panel, options(Method::pca, 11)).IsSolutionUsable());
  const auto narrow = simulate_planted_model(100, 6, 1, 18);
  EXPECT_EQ(fit(narrow.panel, options(Method::pca, 6)).termination, Termination::not_identified);
  EXPECT_TRUE(fit(narrow.panel, options(Method::pca, 5)).IsSolutionUsable());
}

// A given covariance matrix: its observations play the dates' part.
TEST(FactorLimit, AGivenMatrixIsJudgedOnItsAssetsAndObservations) {
  const auto m = simulate_planted_model(252, 30, 3, 16);
  CovarianceInput input;
  input.assets = m.panel.assets;
  const Eigen::MatrixXd centred = m.panel.values.rowwise() - m.panel.values.colwise().mean();
  input.matrix = centred.transpose() * centred / 251.0;
  input.observations = 252;
  const FactorFit f = fit(input, options(Method::max_likelihood, 23));
  EXPECT_EQ(f.termination, Termination::not_identified);
  EXPECT_EQ(f.message,
            "factors = 23: a covariance matrix of 30 assets from 252 observations identifies at most 22 factors by "
            "maximum likelihood (Ledermann bound); choose 22 factors or fewer");
  input.observations = 10;
  EXPECT_NE(fit(input, options(Method::pca, 10)).message.find("identifies at most 9 factors"), std::string::npos);
}

// Screening counts: assets dropped for coverage do not count towards the limit.
TEST(FactorLimit, TheLimitCountsTheAssetsLeftAfterScreening) {
  auto m = simulate_planted_model(120, 8, 1, 19);
  for (Eigen::Index t = 0; t < 100; ++t) m.panel.values(t, 0) = std::numeric_limits<double>::quiet_NaN();
  // 8 assets allow 4 factors by ML (Ledermann); the 7 left after screening allow 3.
  const FactorFit f = fit(m.panel, options(Method::max_likelihood, 4));
  EXPECT_EQ(f.termination, Termination::not_identified);
  EXPECT_EQ(f.excluded.size(), 1u);
  EXPECT_NE(f.message.find("a window of 7 assets and 120 dates identifies at most 3 factors"), std::string::npos)
      << f.message;
}

}  // namespace
