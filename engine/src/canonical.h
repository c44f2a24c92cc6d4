// One canonical form after every solver, so that fits are comparable and stable.
#pragma once

#include <Eigen/Dense>

namespace factorwatch::engine::detail {

// Rotates maximum-likelihood loadings so that L' Psi^-1 L is diagonal: the
// conventional unrotated solution, unique up to column signs and order.
void rotate_to_principal_axes(Eigen::MatrixXd& L, const Eigen::VectorXd& psi);

// Orders columns by variance explained (column sum of squares, largest first) and
// fixes each column's sign: the column sum is made positive (so a factor most
// assets load on points "up"); when that sum is negligible (below 1e-9 of the
// column's absolute sum), the entry largest in absolute value is made positive.
void order_and_fix_signs(Eigen::MatrixXd& L);

// The sign rule above for one column: +1 or -1.
double canonical_sign(const Eigen::Ref<const Eigen::VectorXd>& column);

}  // namespace factorwatch::engine::detail
