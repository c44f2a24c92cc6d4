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

// `fit` rotated onto `reference` directly: orthogonal Procrustes on the standardized
// loadings of the assets both have (engine/alignment.h), applied by change_factor_basis.
// Served windows are aligned onto their own reference (the previous window, say), and
// small rotations accumulate along such a chain; compared with a window far back, they
// would count as drift of single factors although the factor space did not move. A drift
// comparison rotates first, so that only what no rotation explains is left. Returned
// unchanged when the two cannot be aligned (fewer shared assets than min_shared or than
// the factors, or different factor counts).
FactorFit rotated_onto(const FactorFit& fit, const FactorFit& reference, int min_shared);

}  // namespace factorwatch::engine
