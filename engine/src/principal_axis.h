// Principal-axis factoring: eigen-decompose S with communalities on the diagonal,
// re-estimate the communalities from the loadings, repeat until they settle.
#pragma once

#include "eigen_top.h"
#include "estimate.h"

namespace factorwatch::engine::detail {

// Starts from squared multiple correlations (s_ii - 1/(S^-1)_ii) when S is small
// enough to invert and nonsingular; otherwise from the k-factor principal-component
// communalities in `spectrum` (the start used is stated in the message).
Estimate principal_axis_estimate(const SecondMoments& S, const TopEigen& spectrum,
                                 const FitOptions& options);

}  // namespace factorwatch::engine::detail
