// Serving a fit in another factor basis (rotated, aligned): the same model, other axes.
#pragma once

#include <Eigen/Dense>

#include "factorwatch/engine/fit.h"

namespace factorwatch::engine {

// Loadings <- L T, factor covariance <- T^-1 Phi T^-T, and each factor's explained share
// recomputed for the new factors (Phi_jj times the column's sum of squared loadings on the
// basis scale, over the trace). L Phi L', the communalities, the specific variances and
// explained_total do not change. An empty transform leaves the fit as it is.
void change_factor_basis(FactorFit& fit, const Eigen::MatrixXd& transform);

}  // namespace factorwatch::engine
