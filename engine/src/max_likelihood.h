// Maximum likelihood by EM (Rubin and Thayer 1982) in Woodbury form, accelerated
// by SQUAREM (Varadhan and Roland 2008), never forming an N x N matrix.
#pragma once

#include "eigen_top.h"
#include "estimate.h"

namespace factorwatch::engine::detail {

inline constexpr double kLog2Pi = 1.8378770664093454836;  // log(2 pi)

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
