// Facts the theory of the orthogonal factor model states, checked on data drawn
// from a known model (planted structure; invented data, not market data).
#include <gtest/gtest.h>

#include <cmath>

#include "factorwatch/engine/fit.h"
#include "linear_algebra_checks.h"
#include "simulated_model.h"

namespace {

using namespace factorwatch::engine;
using factorwatch::testing::largest_subspace_sine;
using factorwatch::testing::simulate_planted_model;

FitOptions options(Method m, int k) {
  FitOptions o;
  o.method = m;
  o.factors = k;
  o.tolerance = 1e-12;
  o.max_iterations = 50000;
  return o;
}

Eigen::VectorXd sample_variances(const ReturnsPanel& p) {
  const Eigen::MatrixXd X = p.values;
  const Eigen::RowVectorXd mean = X.colwise().mean();
  return ((X.rowwise() - mean).colwise().squaredNorm() / double(X.rows())).transpose();
}

// Each variance is communality plus specific variance, for the fitted Sigma. For ML
// this holds at the optimum (Lawley and Maxwell 1971, ch. 2); for principal
// components and principal axis it holds by construction unless a Heywood floor binds.
// Tolerance: exact (1e-12 relative) by construction; for ML 1e-5 relative, because EM
// stops at a 1e-12 relative log-likelihood change, where the remaining gap
// diag(L (C_zz - I) L') is of order 1e-6 of the variance.
TEST(Theory, VarianceIsCommunalityPlusSpecificVariance) {
  const auto m = simulate_planted_model(2000, 40, 3, 1);
  const Eigen::VectorXd s = sample_variances(m.panel);
  for (Method method : {Method::max_likelihood, Method::pca, Method::principal_axis}) {
    const FactorFit f = fit(m.panel, options(method, 3));
    ASSERT_TRUE(f.converged) << f.BriefReport();
    for (Eigen::Index i = 0; i < s.size(); ++i) {
      if (f.heywood[std::size_t(i)]) continue;
      const double tol = method == Method::max_likelihood ? 1e-5 : 1e-12;
      EXPECT_NEAR(f.communality[i] + f.specific_variance[i], s[i], tol * s[i])
          << to_string(method) << " asset " << i;
    }
  }
}

// Cov(x, f) = L E[f f'] = L: the sample covariance of the returns with the true
// factor draws approaches the planted loadings, within sampling error. Each entry's
// standard error is about sqrt(s_ii / T); 5 standard errors bounds all 120 entries.
TEST(Theory, CovarianceOfReturnsWithTrueFactorsApproachesLoadings) {
  const int T = 20000;
  const auto m = simulate_planted_model(T, 40, 3, 2);
  const Eigen::MatrixXd X = m.panel.values;
  const Eigen::MatrixXd Xc = X.rowwise() - X.colwise().mean();
  const Eigen::MatrixXd Fc = m.factors.rowwise() - m.factors.colwise().mean();
  const Eigen::MatrixXd cross = Xc.transpose() * Fc / double(T);
  const Eigen::VectorXd s = sample_variances(m.panel);
  for (Eigen::Index i = 0; i < cross.rows(); ++i)
    for (Eigen::Index j = 0; j < 3; ++j)
      EXPECT_NEAR(cross(i, j), m.loadings(i, j), 5.0 * std::sqrt(s[i] / T)) << i << "," << j;
}

// The fitted loadings span the planted loading space. With T = 5000 dates the
// estimation error of each loading is O(1/sqrt(T)) ~ 1.4% of its scale; a largest
// principal angle with sine under 0.05 leaves room for that on 60 assets. Principal
// components get 0.1: with unequal specific variances they are not a consistent
// estimator of L (the specific part leaks into the components), a bias of order
// psi / lambda_k that does not shrink with T.
TEST(Theory, FittedLoadingsSpanThePlantedSubspace) {
  const auto m = simulate_planted_model(5000, 60, 4, 3);
  for (Method method : {Method::max_likelihood, Method::principal_axis, Method::pca}) {
    const FactorFit f = fit(m.panel, options(method, 4));
    const double tol = method == Method::pca ? 0.1 : 0.05;
    EXPECT_LT(largest_subspace_sine(f.loadings, m.loadings), tol) << to_string(method);
  }
  const FactorFit ml = fit(m.panel, options(Method::max_likelihood, 4));
  const Eigen::VectorXd rel = (ml.specific_variance - m.specific_variance).cwiseQuotient(m.specific_variance);
  // Specific variances within 15%: their sampling error is about sqrt(2/T) = 2% plus the loading error.
  EXPECT_LT(rel.cwiseAbs().maxCoeff(), 0.15);
}

// ML is scale-equivariant (Lawley and Maxwell 1971): fitting the correlation matrix
// and rescaling by the standard deviations gives the covariance-basis fit.
TEST(Theory, MaximumLikelihoodIsScaleEquivariant) {
  const auto m = simulate_planted_model(1500, 30, 2, 4);
  FitOptions o = options(Method::max_likelihood, 2);
  const FactorFit cov = fit(m.panel, o);
  o.basis = Basis::correlation;
  const FactorFit cor = fit(m.panel, o);
  EXPECT_LT((cov.uniqueness - cor.uniqueness).cwiseAbs().maxCoeff(), 1e-6);
  EXPECT_LT(factorwatch::testing::max_difference_up_to_sign(cov.loadings, cor.loadings),
            1e-5 * cov.loadings.cwiseAbs().maxCoeff());
}

// The model does not depend on the order of the assets or on the sign convention of
// one asset's returns: permuting columns permutes rows of L; negating an asset's
// returns negates its loadings row and leaves its specific variance unchanged.
TEST(Theory, InvariantUnderAssetPermutationAndSignFlip) {
  const auto m = simulate_planted_model(1000, 25, 2, 5);
  const FactorFit base = fit(m.panel, options(Method::max_likelihood, 2));
  ReturnsPanel changed = m.panel;
  std::vector<int> order;
  for (int i = 24; i >= 0; --i) order.push_back(i);
  for (int i = 0; i < 25; ++i) {
    changed.values.col(i) = m.panel.values.col(order[std::size_t(i)]);
    changed.assets[std::size_t(i)] = m.panel.assets[std::size_t(order[std::size_t(i)])];
  }
  changed.values.col(3) *= -1.0;  // asset order[3] = 21
  const FactorFit other = fit(changed, options(Method::max_likelihood, 2));
  for (int i = 0; i < 25; ++i) {
    const int j = order[std::size_t(i)];
    const double sign = i == 3 ? -1.0 : 1.0;
    EXPECT_NEAR(other.specific_variance[i], base.specific_variance[j], 1e-9);
    for (int c = 0; c < 2; ++c)
      EXPECT_NEAR(other.loadings(i, c), sign * base.loadings(j, c), 1e-6 * base.loadings.cwiseAbs().maxCoeff());
  }
}

}  // namespace
