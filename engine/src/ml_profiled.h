// Maximum likelihood for wide universes by a fixed point in the specific variances alone,
// the loadings profiled out (the iteration scikit-learn's FactorAnalysis runs, here on the
// T x T Gram matrix and accelerated by SQUAREM):
//   L(psi) = Psi^1/2 V_k (G_k - I)^1/2,  psi' = max(diag(S - L(psi) L(psi)'), floor),
// with (G_k, V_k) the top-k eigenpairs of S* = Psi^-1/2 S Psi^-1/2, found as those of the
// T x T matrix X Psi^-1 X' (S = X'X) and mapped back. At L(psi) the gradient in L is zero
// and psi_i dl/dpsi_i = (psi'_i / psi_i - 1) / 2 for an interior psi_i, so the map gives the
// stopping criterion for free. One evaluation costs about one Gram matrix (T^2 N); EM needs
// hundreds of passes (4 T N k each) where a weak factor sits near the noise edge, this
// iteration about seven evaluations (docs/performance.md).
#pragma once

#include <Eigen/Dense>
#include <string>

#include "moments.h"

namespace factorwatch::engine::detail {

struct ProfiledOutcome {
  bool ok = false;           // the criterion reached the target
  int evaluations = 0;       // Gram evaluations of the map
  Eigen::MatrixXd loadings;  // L(psi), N x k
  Eigen::VectorXd psi;
  double criterion = 0;      // max |psi_i dl/dpsi_i| over specific variances not held at the floor
  std::string problem;
};

// The log-likelihood per observation at (L(psi), psi) from the top-k eigenvalues g of
// S* = Psi^-1/2 S Psi^-1/2 alone: Sigma* = I + V (G' - I) V' with g'_j = max(g_j, 1), so
// l = -1/2 [N log 2 pi + sum log psi_i + sum_j (log g'_j - g'_j + 1) + sum s_ii / psi_i].
double profiled_log_likelihood(const Eigen::VectorXd& top_eigenvalues, const Eigen::VectorXd& psi,
                               const Eigen::VectorXd& s);

// S must hold the panel (S = X'X, S.panel() not null); psi > 0 the start.
ProfiledOutcome profiled_fixed_point(const SecondMoments& S, const Eigen::VectorXd& floor, Eigen::VectorXd psi,
                                     int factors, double target, int max_evaluations, unsigned seed);

}  // namespace factorwatch::engine::detail
