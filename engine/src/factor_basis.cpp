#include "factorwatch/engine/factor_basis.h"

#include "factorwatch/engine/alignment.h"
#include "factorwatch/engine/rotation.h"

namespace factorwatch::engine {

void change_factor_basis(FactorFit& fit, const Eigen::MatrixXd& transform) {
  if (transform.size() == 0 || fit.loadings.size() == 0) return;
  if (fit.factor_covariance.size() == 0) fit.factor_covariance = Eigen::MatrixXd::Identity(fit.loadings.cols(), fit.loadings.cols());
  const Eigen::Index k = fit.factor_covariance.rows();
  const bool identity = fit.factor_covariance == Eigen::MatrixXd::Identity(k, k);
  const bool orthogonal = (transform.transpose() * transform).isIdentity(1e-12);
  apply_factor_transform(transform, fit.loadings, fit.factor_covariance);
  // Orthogonal factors turned by an orthogonal matrix stay orthogonal: the identity, not
  // the identity plus the rounding of two solves (which would show as 0.9999999999999992).
  if (identity && orthogonal) fit.factor_covariance.setIdentity();
  if (!(fit.trace > 0)) return;
  Eigen::VectorXd squares;
  if (fit.basis == Basis::correlation)
    squares = (fit.scale.cwiseInverse().asDiagonal() * fit.loadings).colwise().squaredNorm().transpose();
  else
    squares = fit.loadings.colwise().squaredNorm().transpose();
  fit.explained_share = fit.factor_covariance.diagonal().cwiseProduct(squares) / fit.trace;
}

FactorFit rotated_onto(const FactorFit& fit, const FactorFit& reference, int min_shared) {
  FactorFit out = fit;
  if (fit.loadings.size() == 0 || reference.loadings.size() == 0) return out;
  AlignmentOptions options;
  options.min_shared_assets = min_shared;
  const Alignment a = align_to_reference({fit.assets, fit.standardized_loadings()},
                                         {reference.assets, reference.standardized_loadings()}, options);
  if (a.status == AlignmentStatus::aligned) change_factor_basis(out, a.rotation);
  return out;
}

}  // namespace factorwatch::engine
