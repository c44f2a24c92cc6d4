#include "pca.h"

#include <cmath>

namespace factorwatch::engine::detail {

Estimate pca_estimate(const SecondMoments& S, const TopEigen& spectrum, int factors,
                      double specific_floor) {
  Estimate e;
  e.loadings = spectrum.vectors.leftCols(factors);
  for (int j = 0; j < factors; ++j)
    e.loadings.col(j) *= std::sqrt(std::max(spectrum.values[j], 0.0));
  e.specific_variance = S.diagonal() - e.loadings.rowwise().squaredNorm();
  apply_specific_floor(S.diagonal(), specific_floor, e.specific_variance, e.heywood);
  e.termination = Termination::converged;
  e.message = "closed form from the top eigenpairs";
  e.solver_path = spectrum.path;
  return e;
}

}  // namespace factorwatch::engine::detail
