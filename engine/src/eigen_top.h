// Top eigenpairs of the basis matrix S (optionally minus a diagonal), by the
// cheapest exact route for the shape: dense, Spectra on the T x T Gram twin, or
// Spectra on a matrix-free operator. Checks convergence, retries, falls back.
#pragma once

#include <string>

#include "factorwatch/engine/fit.h"
#include "moments.h"

namespace factorwatch::engine::detail {

struct TopEigen {
  Eigen::VectorXd values;   // largest first
  Eigen::MatrixXd vectors;  // N x values.size(), orthonormal columns
  std::string path;         // which route ran, in words
  bool ok = false;
  std::string problem;      // when !ok
};

// Top `count` eigenpairs of S - diag(shift); shift may be nullptr (then S itself).
// count is capped at N. `vectors_needed` (<= count) lets the Gram route map back
// only the eigenvectors the caller uses.
TopEigen top_eigenpairs(const SecondMoments& S, int count, int vectors_needed,
                        const Eigen::VectorXd* shift, SolverChoice choice, unsigned seed);

// Top `count` eigenpairs of a dense symmetric matrix (LAPACK-style full solve).
TopEigen dense_top_eigenpairs(const Eigen::MatrixXd& A, int count);

// Sizes behind the `automatic` route (documented in docs/methodology.md):
// up to kDenseLimit assets the full dense eigen-decomposition is cheap enough;
// up to kFormedLimit assets (and T >= N) S is formed once and Spectra runs on it,
// since a product with the formed S (N^2) is cheaper than with the panel (2 T N).
inline constexpr Eigen::Index kDenseLimit = 200;
inline constexpr Eigen::Index kFormedLimit = 4000;

}  // namespace factorwatch::engine::detail
