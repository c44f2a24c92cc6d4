// Newton steps on the Gaussian likelihood concentrated in the specific variances (the
// loadings profiled out), the finishing stage of maximum likelihood for moderate N.
//
// With x = log psi and S* = Psi^-1/2 S Psi^-1/2 (eigenvalues g_1 >= ... >= g_N,
// eigenvectors v_j), the best loadings for given psi are Psi^1/2 V_k (G_k - I)^1/2 and
//   F(x) = sum_{j>k} (g_j - log g_j - 1)        (= -2 l + constant, l per observation),
// the discrepancy that Lawley and Maxwell (1971, ch. 4) minimise. Its gradient and its
// Hessian follow from first-order eigen-perturbation (as in Jennrich and Robinson 1969,
// Psychometrika 34, 111-123, there in psi):
//   dF/dx_i = -[(S*_ii - 1) - sum_{m<=k} (g_m - 1) v_im^2],
//   H = (S* - V_k G_k V_k') o (I - V_k V_k')
//       + sum_{m<=k} (v_m v_m') o (U diag(f_m) U'),   f_m(g) = (g - 1)(g + g_m)/(g - g_m),
// with o the elementwise product and U the eigenvectors beyond k. Each step costs a full
// symmetric eigendecomposition and k products of N x N matrices, O(k N^3): worth it for
// a few hundred assets, where EM's linear rate is the bottleneck, not for thousands.
#pragma once

#include <Eigen/Dense>
#include <string>

namespace factorwatch::engine::detail {

struct PolishOutcome {
  bool ok = false;          // reached the target on the free specific variances
  int steps = 0;            // Newton steps taken
  Eigen::MatrixXd loadings; // N x k, profiled at psi (valid when ok)
  Eigen::VectorXd psi;      // N
  std::string problem;      // why not ok
};

// Minimises F over x >= log(floor) from psi (positive), with S dense and positive
// definite (N x N, basis scale). Stops when max_i |dl/dx_i| = max_i |dF/dx_i| / 2 over the
// specific variances not held at their floor is at most `target`.
PolishOutcome newton_polish(const Eigen::MatrixXd& S, int factors, const Eigen::VectorXd& floor,
                            Eigen::VectorXd psi, double target, int max_steps);

}  // namespace factorwatch::engine::detail
