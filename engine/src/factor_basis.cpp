#include "factorwatch/engine/factor_basis.h"

#include "factorwatch/engine/rotation.h"

namespace factorwatch::engine {

void change_factor_basis(FactorFit& fit, const Eigen::MatrixXd& transform) {
  if (transform.size() == 0 || fit.loadings.size() == 0) return;
  if (fit.factor_covariance.size() == 0) fit.factor_covariance = Eigen::MatrixXd::Identity(fit.loadings.cols(), fit.loadings.cols());
  apply_factor_transform(transform, fit.loadings, fit.factor_covariance);
  if (!(fit.trace > 0)) return;
  Eigen::VectorXd squares;
  if (fit.basis == Basis::correlation)
    squares = (fit.scale.cwiseInverse().asDiagonal() * fit.loadings).colwise().squaredNorm().transpose();
  else
    squares = fit.loadings.colwise().squaredNorm().transpose();
  fit.explained_share = fit.factor_covariance.diagonal().cwiseProduct(squares) / fit.trace;
}

}  // namespace factorwatch::engine
