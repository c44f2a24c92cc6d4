// Principal components: L = V_k diag(sqrt(lambda_k)), Psi = diag(S) - communality.
#pragma once

#include "eigen_top.h"
#include "estimate.h"

namespace factorwatch::engine::detail {

Estimate pca_estimate(const SecondMoments& S, const TopEigen& spectrum, int factors,
                      double specific_floor);

}  // namespace factorwatch::engine::detail
