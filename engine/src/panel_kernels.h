// Hand-written kernels for the two skinny products with the T x N panel that
// dominate a fit. Eigen's GEMM packs (copies) the panel before multiplying, which
// for these shapes costs about as much as the arithmetic; these kernels read each
// row block once and keep it in cache between its two uses.
#pragma once

#include <Eigen/Dense>

#include "factorwatch/engine/panel.h"

namespace factorwatch::engine::detail {

// Below this many panel entries a product takes microseconds and waking a second
// thread costs more than it saves (and stalls badly when the cores are busy).
inline constexpr Eigen::Index kParallelEntries = Eigen::Index(1) << 18;

// Threads for a pass over X: OpenMP's count from kParallelEntries entries up, else one.
int thread_count(const RowMatrix& X);

// Widest V the kernels are instantiated for; wider products fall back to Eigen.
inline constexpr int kKernelMaxColumns = 16;

// out (N x m) = X' (X V) for V (N x m), one pass over X. False when m is unsupported.
bool fused_gram_product(const RowMatrix& X, const Eigen::MatrixXd& V, Eigen::MatrixXd& out);

// out (N x m) = X' U for U (T x m), one pass over X. False when m is unsupported.
bool transpose_product(const RowMatrix& X, const Eigen::MatrixXd& U, Eigen::MatrixXd& out);

}  // namespace factorwatch::engine::detail
