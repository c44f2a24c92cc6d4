// Small comparisons the numerical tests share.
#pragma once

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>

namespace factorwatch::testing {

// Sine of the largest principal angle between the column spaces of A and B
// (Bjorck and Golub 1973): 0 for the same subspace, 1 when some direction of one
// is orthogonal to the other.
inline double largest_subspace_sine(const Eigen::MatrixXd& A, const Eigen::MatrixXd& B) {
  const Eigen::MatrixXd Qa = Eigen::HouseholderQR<Eigen::MatrixXd>(A).householderQ() *
                             Eigen::MatrixXd::Identity(A.rows(), A.cols());
  const Eigen::MatrixXd Qb = Eigen::HouseholderQR<Eigen::MatrixXd>(B).householderQ() *
                             Eigen::MatrixXd::Identity(B.rows(), B.cols());
  const Eigen::VectorXd cosines = Eigen::JacobiSVD<Eigen::MatrixXd>(Qa.transpose() * Qb).singularValues();
  const double c = std::min(1.0, cosines.minCoeff());
  return std::sqrt(std::max(0.0, 1.0 - c * c));
}

// Largest absolute difference between columns of A and B after flipping each
// column of A to B's sign (loadings are unique only up to column sign).
inline double max_difference_up_to_sign(const Eigen::MatrixXd& A, const Eigen::MatrixXd& B) {
  double worst = 0;
  for (Eigen::Index j = 0; j < A.cols(); ++j) {
    const double plus = (A.col(j) - B.col(j)).cwiseAbs().maxCoeff();
    const double minus = (A.col(j) + B.col(j)).cwiseAbs().maxCoeff();
    worst = std::max(worst, std::min(plus, minus));
  }
  return worst;
}

}  // namespace factorwatch::testing
