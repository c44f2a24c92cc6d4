// Maximum likelihood by EM (Rubin and Thayer 1982) in Woodbury form, accelerated
// by SQUAREM (Varadhan and Roland 2008), never forming an N x N matrix.
#pragma once

#include "eigen_top.h"
#include "estimate.h"

namespace factorwatch::engine::detail {

inline constexpr double kLog2Pi = 1.8378770664093454836;  // log(2 pi)
// The Newton stage (ml_polish.h) runs up to this many assets, O(k N^3) per step: at
// T = 504, k = 10 on a planted panel it cost 0.02 s against EM alone 0.018 s at N = 100,
// 0.089 against 0.043 at 200 and 0.21 against 0.083 at 400; on a hard case (R's
// ability.cov, k = 2, a uniqueness near the bound) it takes 18 iterations instead of 301.
inline constexpr Eigen::Index kPolishMaxWidth = 200;
// ... once EM has brought the largest scaled gradient this low. From 1e-2 the safeguarded
// steps converged on every reference case; from 1e-3 EM spent 107 passes getting there on
// ability.cov.
inline constexpr double kPolishEntry = 1e-2;
// Newton converges quadratically there (about 4 steps from 1e-3 to 1e-15 on the reference
// cases); a stage that needs more than this has met a region it cannot handle, and EM
// goes on.
inline constexpr int kPolishMaxSteps = 30;
// A specific variance at its floor whose derivative dl/dlog(psi_i) points below the floor
// is at its constrained optimum: the stopping criterion leaves it out.
inline bool held_at_floor(double psi, double floor, double dl_dlog_psi) { return psi <= floor && dl_dlog_psi < 0; }
// Evaluations of the fixed point in psi (ml_profiled.h) before EM takes over; it needed 7
// on the benchmark panel at N = 2000 to 20 000.
inline constexpr int kProfileMaxEvaluations = 60;

// Gaussian log-likelihood per observation of Sigma = L L' + diag(psi) given S:
// -(1/2) [N log(2 pi) + log|Sigma| + tr(Sigma^-1 S)], by the matrix determinant
// lemma and the Woodbury identity (one product S * (Psi^-1 L)).
double log_likelihood(const SecondMoments& S, const Eigen::MatrixXd& L, const Eigen::VectorXd& psi);

// Probabilistic-PCA start (Tipping and Bishop 1999): L = V_k (Lambda_k - sigma^2)^(1/2),
// sigma^2 the mean of the discarded eigenvalues; psi = diag(S) - communality,
// kept at least 5% of s_ii so that EM can move it either way.
void cold_start(const SecondMoments& S, const TopEigen& spectrum, double trace, int factors,
                Eigen::MatrixXd& L, Eigen::VectorXd& psi);

Estimate ml_estimate(const SecondMoments& S, Eigen::MatrixXd L, Eigen::VectorXd psi,
                     const FitOptions& options);

}  // namespace factorwatch::engine::detail
