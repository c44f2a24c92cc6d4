// Principal components against LAPACK's dense symmetric solver, and the three
// solver routes (dense, T x T Gram twin, matrix-free Spectra) against each other.
#include <gtest/gtest.h>

#include "factorwatch/engine/fit.h"
#include "linear_algebra_checks.h"
#include "eustock_returns.h"
#include "reference_table.h"
#include "simulated_model.h"

namespace {

using namespace factorwatch::engine;
using factorwatch::testing::max_difference_up_to_sign;
using factorwatch::testing::read_reference;

// Daily log returns of R's datasets::EuStockMarkets (DAX, SMI, CAC, FTSE, 1859 days).
ReturnsPanel eustock() { return factorwatch::testing::eustock_returns(); }

// Rows of eustock_pca_reference.csv for one source, as eigenvalues and unit vectors.
void reference_pairs(const std::string& source, Eigen::VectorXd& values, Eigen::MatrixXd& vectors) {
  const auto t = read_reference("eustock_pca_reference.csv");
  std::vector<std::size_t> rows;
  for (std::size_t r = 0; r < t.rows.size(); ++r)
    if (t.text(r, "source") == source) rows.push_back(r);
  ASSERT_EQ(rows.size(), 4u) << source;
  values.resize(4);
  vectors.resize(4, 4);
  const char* names[] = {"DAX", "SMI", "CAC", "FTSE"};
  for (int j = 0; j < 4; ++j) {
    values[j] = t.number(rows[std::size_t(j)], "eigenvalue");
    for (int i = 0; i < 4; ++i) vectors(i, j) = t.number(rows[std::size_t(j)], names[i]);
  }
}

// Principal-component loadings from reference eigenpairs: sqrt(lambda_j) v_j, j < k.
Eigen::MatrixXd loadings_from(const Eigen::VectorXd& values, const Eigen::MatrixXd& vectors, int k) {
  Eigen::MatrixXd L = vectors.leftCols(k);
  for (int j = 0; j < k; ++j) L.col(j) *= std::sqrt(values[j]);
  return L;
}

// Source: numpy 1.24.2 numpy.linalg.eigh(numpy.cov(r, rowvar=False, ddof=0)) — LAPACK
// dsyevd — on the same returns (tests/reference/make_eustock_pca.py). ddof=0 because
// the engine's covariance divides by the sum of the weights (n).
TEST(PrincipalComponents, CovarianceEigenpairsMatchNumpyEigh) {
  Eigen::VectorXd values;
  Eigen::MatrixXd vectors;
  reference_pairs("numpy eigh(cov ddof=0)", values, vectors);
  FitOptions o;
  o.method = Method::pca;
  o.factors = 2;
  const FactorFit f = fit(eustock(), o);
  ASSERT_TRUE(f.converged);
  ASSERT_GE(f.eigenvalues.size(), 4);
  for (int j = 0; j < 4; ++j) EXPECT_NEAR(f.eigenvalues[j], values[j], 1e-12 * values[0]);
  // Loadings are sqrt(lambda_j) v_j; relative 1e-10 covers rounding in both solvers.
  const Eigen::MatrixXd expected = loadings_from(values, vectors, 2);
  EXPECT_LT(max_difference_up_to_sign(f.loadings, expected), 1e-10 * expected.cwiseAbs().maxCoeff());
  EXPECT_NEAR(f.trace, values.sum(), 1e-12 * values.sum());
}

// Source: R 4.2.2 eigen(cor(r), symmetric = TRUE) (LAPACK dsyevr), tests/reference/make_eustock.R.
TEST(PrincipalComponents, CorrelationEigenpairsMatchR) {
  Eigen::VectorXd values;
  Eigen::MatrixXd vectors;
  reference_pairs("R eigen(cor(r))", values, vectors);
  FitOptions o;
  o.method = Method::pca;
  o.factors = 3;
  o.basis = Basis::correlation;
  const FactorFit f = fit(eustock(), o);
  ASSERT_TRUE(f.converged) << f.message;
  ASSERT_GE(f.eigenvalues.size(), 4);
  for (int j = 0; j < 4; ++j) EXPECT_NEAR(f.eigenvalues[j], values[j], 1e-12);
  const Eigen::MatrixXd expected = loadings_from(values, vectors, 3);
  EXPECT_LT(max_difference_up_to_sign(f.standardized_loadings(), expected), 1e-10);
  EXPECT_NEAR(f.trace, 4.0, 1e-12);
}

// The routes must agree: same eigenvalues (relative 1e-9, Spectra's tolerance is
// 1e-12 on Ritz residuals) and the same k-dimensional subspace.
TEST(PrincipalComponents, DenseGramAndMatrixFreeRoutesAgree) {
  const auto planted = factorwatch::testing::simulate_planted_model(300, 1200, 5, 11);
  FitOptions o;
  o.method = Method::pca;
  o.factors = 5;
  std::vector<FactorFit> fits;
  for (SolverChoice s : {SolverChoice::dense, SolverChoice::automatic, SolverChoice::matrix_free}) {
    o.solver = s;
    fits.push_back(fit(planted.panel, o));
    ASSERT_TRUE(fits.back().converged) << fits.back().solver_path;
  }
  EXPECT_NE(fits[0].solver_path, fits[1].solver_path);
  EXPECT_NE(fits[1].solver_path, fits[2].solver_path);
  for (std::size_t r = 1; r < fits.size(); ++r) {
    ASSERT_EQ(fits[r].eigenvalues.size(), fits[0].eigenvalues.size());
    for (Eigen::Index j = 0; j < fits[0].eigenvalues.size(); ++j)
      EXPECT_NEAR(fits[r].eigenvalues[j], fits[0].eigenvalues[j], 1e-9 * fits[0].eigenvalues[0])
          << fits[r].solver_path << " eigenvalue " << j;
    EXPECT_LT(factorwatch::testing::largest_subspace_sine(fits[r].loadings, fits[0].loadings), 1e-6);
    EXPECT_LT(max_difference_up_to_sign(fits[r].loadings, fits[0].loadings), 1e-7 * fits[0].loadings.cwiseAbs().maxCoeff());
  }
  // At least 2k + 10 eigenvalues are reported.
  EXPECT_GE(fits[0].eigenvalues.size(), 20);
}

// Explained shares: lambda_j / trace for principal components (definition).
TEST(PrincipalComponents, ExplainedShareIsEigenvalueOverTrace) {
  const auto planted = factorwatch::testing::simulate_planted_model(400, 50, 3, 5);
  FitOptions o;
  o.method = Method::pca;
  o.factors = 3;
  const FactorFit f = fit(planted.panel, o);
  for (int j = 0; j < 3; ++j) EXPECT_NEAR(f.explained_share[j], f.eigenvalues[j] / f.trace, 1e-12);
}

}  // namespace
