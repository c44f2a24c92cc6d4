// Serving a fit in another factor basis (engine/factor_basis.h): the model L Phi L' and
// the explained total stay, the per-factor shares follow the factors, and rotated_onto
// undoes a known rotation. Data: a planted factor model (invented numbers,
// tests/simulated_model.h); the checks are identities of linear algebra.
#include <gtest/gtest.h>

#include <random>

#include "factorwatch/engine/factor_basis.h"
#include "factorwatch/engine/fit.h"
#include "simulated_model.h"

namespace {

using namespace factorwatch::engine;
namespace fw = factorwatch::testing;

FactorFit planted_fit(Basis basis) {
  FitOptions options;
  options.method = Method::max_likelihood;
  options.factors = 3;
  options.basis = basis;
  return fit(fw::simulate_planted_model(400, 30, 3, 5).panel, options);
}

Eigen::MatrixXd random_orthogonal(int k, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal;
  Eigen::MatrixXd m(k, k);
  for (int i = 0; i < k; ++i)
    for (int j = 0; j < k; ++j) m(i, j) = normal(rng);
  return Eigen::HouseholderQR<Eigen::MatrixXd>(m).householderQ();
}

TEST(FactorBasis, ModelAndTotalsStayAndSharesFollowTheFactors) {
  for (Basis basis : {Basis::covariance, Basis::correlation}) {
    const FactorFit original = planted_fit(basis);
    ASSERT_TRUE(original.IsSolutionUsable());
    FactorFit moved = original;
    Eigen::MatrixXd t = random_orthogonal(3, 7);
    t.col(1) *= 2.5;  // not orthogonal: an oblique change of basis too
    change_factor_basis(moved, t);
    const Eigen::MatrixXd before = original.loadings * original.factor_covariance * original.loadings.transpose();
    const Eigen::MatrixXd after = moved.loadings * moved.factor_covariance * moved.loadings.transpose();
    // Two k x k solves and products: relative error a few times 1e-16 times cond(T) (about 3).
    EXPECT_LT((after - before).norm(), 1e-13 * before.norm()) << to_string(basis);
    EXPECT_EQ(moved.explained_total, original.explained_total);
    // Before any change, the fit's own shares follow the same formula (Phi = I).
    FactorFit same = original;
    change_factor_basis(same, Eigen::MatrixXd::Identity(3, 3));
    EXPECT_LT((same.explained_share - original.explained_share).cwiseAbs().maxCoeff(), 1e-15) << to_string(basis);
    // A permutation moves the shares with the factors.
    FactorFit swapped = original;
    Eigen::MatrixXd p = Eigen::MatrixXd::Zero(3, 3);
    p(0, 2) = p(1, 1) = p(2, 0) = 1;
    change_factor_basis(swapped, p);
    EXPECT_NEAR(swapped.explained_share(0), original.explained_share(2), 1e-15);
    EXPECT_NEAR(swapped.explained_share(2), original.explained_share(0), 1e-15);
  }
}

TEST(FactorBasis, RotatedOntoUndoesAKnownRotationWithAFlip) {
  const FactorFit reference = planted_fit(Basis::covariance);
  FactorFit rotated = reference;
  Eigen::MatrixXd q = random_orthogonal(3, 11);
  q.col(2) *= -1;
  change_factor_basis(rotated, q);
  const FactorFit back = rotated_onto(rotated, reference, 10);
  // Procrustes recovers q' exactly up to rounding of a 3 x 3 SVD (Schonemann 1966).
  EXPECT_LT((back.loadings - reference.loadings).cwiseAbs().maxCoeff(), 1e-14);
  // Too few shared assets for the minimum asked: returned as it was.
  const FactorFit unchanged = rotated_onto(rotated, reference, 1000);
  EXPECT_TRUE(unchanged.loadings == rotated.loadings);
}

}  // namespace
