// Maximum likelihood against R's stats::factanal on a published dataset.
//
// Source: the 24 psychological tests of Holzinger and Swineford (1939), correlation
// matrix as distributed in R's datasets package (Harman74.cor, n = 145). Reference
// values: R 4.2.2 stats::factanal(factors = k, covmat = Harman74.cor, rotation = "none",
// control = list(nstart = 1, lower = 0.005, opt = list(factr = 1, pgtol = 0,
// maxit = 10000))) — see tests/reference/make_harman74.R and the file headers.
#include <gtest/gtest.h>

#include "factorwatch/engine/fit.h"
#include "linear_algebra_checks.h"
#include "reference_table.h"

namespace {

using namespace factorwatch::engine;
using factorwatch::testing::read_reference;

CovarianceInput harman74() {
  const auto table = read_reference("harman74_cor.csv");
  CovarianceInput in;
  const std::size_t p = table.rows.size();
  in.matrix.resize(Eigen::Index(p), Eigen::Index(p));
  for (std::size_t i = 0; i < p; ++i) {
    in.assets.push_back(table.rows[i][0]);
    for (std::size_t j = 0; j < p; ++j) in.matrix(Eigen::Index(i), Eigen::Index(j)) = std::stod(table.rows[i][j + 1]);
  }
  in.observations = 145;
  return in;
}

FitOptions tight_ml(int k) {
  FitOptions o;
  o.method = Method::max_likelihood;
  o.factors = k;
  o.basis = Basis::correlation;
  o.tolerance = 1e-14;  // far past R's optimum accuracy (~3e-8 on uniquenesses, see the file header)
  o.max_iterations = 200000;
  return o;
}

class Harman74 : public ::testing::TestWithParam<int> {};

TEST_P(Harman74, UniquenessesLoadingsAndBartlettTestMatchFactanal) {
  const int k = GetParam();
  const FactorFit f = fit(harman74(), tight_ml(k));
  ASSERT_TRUE(f.converged) << f.BriefReport();

  const auto ref = read_reference("harman74_factanal_k" + std::to_string(k) + ".csv");
  ASSERT_EQ(ref.rows.size(), f.assets.size());
  Eigen::MatrixXd ref_loadings(ref.rows.size(), k);
  for (std::size_t i = 0; i < ref.rows.size(); ++i) {
    EXPECT_EQ(ref.text(i, "variable"), f.assets[i]);
    // Tolerance 2e-6: R's optimum agrees with itself across 50 random starts to
    // 3.3e-8 (file header); our EM is run to a 1e-14 relative log-likelihood change.
    EXPECT_NEAR(f.uniqueness[Eigen::Index(i)], ref.number(i, "uniqueness"), 2e-6) << f.assets[i];
    for (int j = 0; j < k; ++j) ref_loadings(Eigen::Index(i), j) = ref.number(i, "f" + std::to_string(j + 1));
  }
  // Both are the unrotated solution (L' Psi^-1 L diagonal), ordered by variance
  // explained here and by eigenvalue in R: compare each R column with ours up to
  // sign, after matching columns by largest absolute congruence.
  const Eigen::MatrixXd ours = f.standardized_loadings();
  for (int j = 0; j < k; ++j) {
    Eigen::Index best = 0;
    (ours.transpose() * ref_loadings.col(j)).cwiseAbs().maxCoeff(&best);
    const double diff = factorwatch::testing::max_difference_up_to_sign(ours.col(best), ref_loadings.col(j));
    EXPECT_LT(diff, 2e-5) << "factor " << j + 1;
  }

  const auto summary = read_reference("harman74_factanal_summary.csv");
  const std::size_t row = std::size_t(k - 1);
  ASSERT_TRUE(f.lr_test.defined);
  EXPECT_EQ(f.lr_test.dof, summary.number(row, "dof"));
  EXPECT_NEAR(f.lr_test.statistic, summary.number(row, "statistic"), 1e-6 * summary.number(row, "statistic"));
  EXPECT_NEAR(f.lr_test.p_value, summary.number(row, "p_value"), 1e-4 * summary.number(row, "p_value"));
}

INSTANTIATE_TEST_SUITE_P(FactorsOneToFive, Harman74, ::testing::Values(1, 2, 3, 4, 5));

// Lawley and Maxwell (1971): at the ML optimum diag(L L' + Psi) = diag(S).
TEST(Harman74, OptimumReproducesTheDiagonal) {
  for (int k = 1; k <= 5; ++k) {
    const FactorFit f = fit(harman74(), tight_ml(k));
    const Eigen::VectorXd implied = f.communality + f.specific_variance;
    EXPECT_LT((implied.array() - 1.0).abs().maxCoeff(), 1e-7) << "k = " << k;
  }
}

}  // namespace
