#include "moments.h"

#include <algorithm>
#include <vector>

#ifdef _OPENMP
#include <omp.h>
#endif

#include "panel_kernels.h"

namespace factorwatch::engine::detail {
namespace {

// Rows per block in the fused pass: a block of about 2 MiB stays in the last-level
// cache between its two uses (Y_b = X_b V, then acc += X_b' Y_b), so the panel is
// read from memory once per product instead of twice.
Eigen::Index rows_per_block(Eigen::Index width) {
  const Eigen::Index target_bytes = Eigen::Index(2) << 20;
  return std::max<Eigen::Index>(8, target_bytes / std::max<Eigen::Index>(1, 8 * width));
}

}  // namespace

PanelMoments::PanelMoments(RowMatrix X) : X_(std::move(X)) {
  diag_ = X_.colwise().squaredNorm().transpose();
}

PanelMoments::PanelMoments(RowMatrix X, Eigen::VectorXd diagonal)
    : X_(std::move(X)), diag_(std::move(diagonal)) {}

void PanelMoments::multiply(const Eigen::MatrixXd& V, Eigen::MatrixXd& out) const {
  if (fused_gram_product(X_, V, out)) return;
  // Wide V: Eigen's GEMM per cache-sized row block, one accumulator per thread.
  const Eigen::Index T = X_.rows(), N = X_.cols(), m = V.cols();
  const Eigen::Index block = rows_per_block(N);
  const Eigen::Index blocks = (T + block - 1) / block;
  out.setZero(N, m);
#pragma omp parallel if (X_.size() >= kParallelEntries)
  {
    Eigen::MatrixXd acc = Eigen::MatrixXd::Zero(N, m);
    Eigen::MatrixXd Yb;
    bool used = false;
#pragma omp for schedule(static)
    for (Eigen::Index b = 0; b < blocks; ++b) {
      const Eigen::Index first = b * block;
      const Eigen::Index rows = std::min(block, T - first);
      const auto Xb = X_.middleRows(first, rows);
      Yb.noalias() = Xb * V;
      acc.noalias() += Xb.transpose() * Yb;
      used = true;
    }
    if (used) {
#pragma omp critical
      out += acc;
    }
  }
}

void PanelMoments::multiply_vector(const double* x, double* y) const {
  Eigen::Map<const Eigen::VectorXd> xv(x, X_.cols());
  Eigen::Map<Eigen::VectorXd> yv(y, X_.cols());
  const Eigen::VectorXd u = X_ * xv;
  yv.noalias() = X_.transpose() * u;
}

Eigen::MatrixXd PanelMoments::dense() const {
  Eigen::MatrixXd S = Eigen::MatrixXd::Zero(X_.cols(), X_.cols());
  S.selfadjointView<Eigen::Lower>().rankUpdate(X_.transpose());
  return S.selfadjointView<Eigen::Lower>();
}

DenseMoments::DenseMoments(Eigen::MatrixXd S) : S_(std::move(S)) { diag_ = S_.diagonal(); }

void DenseMoments::multiply(const Eigen::MatrixXd& V, Eigen::MatrixXd& out) const {
  out.noalias() = S_ * V;
}

void DenseMoments::multiply_vector(const double* x, double* y) const {
  Eigen::Map<const Eigen::VectorXd> xv(x, S_.cols());
  Eigen::Map<Eigen::VectorXd> yv(y, S_.rows());
  yv.noalias() = S_ * xv;
}

Eigen::MatrixXd gram_matrix(const RowMatrix& X) {
  // Only the lower block triangle is computed (half the flops of X X'), one GEMM
  // per block pair with the long dimension N inside, pairs spread over threads.
  const Eigen::Index T = X.rows();
  const Eigen::Index block = 64;
  const Eigen::Index blocks = (T + block - 1) / block;
  std::vector<std::pair<Eigen::Index, Eigen::Index>> pairs;
  for (Eigen::Index i = 0; i < blocks; ++i)
    for (Eigen::Index j = 0; j <= i; ++j) pairs.emplace_back(i, j);
  Eigen::MatrixXd G(T, T);
#pragma omp parallel for schedule(dynamic) if (X.size() >= kParallelEntries)
  for (std::size_t p = 0; p < pairs.size(); ++p) {
    const Eigen::Index i0 = pairs[p].first * block, j0 = pairs[p].second * block;
    const Eigen::Index ri = std::min(block, T - i0), rj = std::min(block, T - j0);
    G.block(i0, j0, ri, rj).noalias() = X.middleRows(i0, ri) * X.middleRows(j0, rj).transpose();
  }
  return G.selfadjointView<Eigen::Lower>();
}

Eigen::MatrixXd scaled_gram_matrix(const RowMatrix& X, const Eigen::VectorXd& d, RowMatrix& scratch) {
  // Row block i is scaled once into this thread's slice of scratch, then multiplied by
  // the unscaled row blocks j <= i: the lower block triangle of (X_i D) X_j'. Blocks go
  // largest first so that two threads finish together.
  const Eigen::Index T = X.rows(), N = X.cols();
  const Eigen::Index block = 64;
  const Eigen::Index blocks = (T + block - 1) / block;
  const int threads = thread_count(X);
  if (scratch.rows() < threads * block || scratch.cols() != N) scratch.resize(threads * block, N);
  Eigen::MatrixXd G(T, T);
#pragma omp parallel for schedule(dynamic, 1) num_threads(threads) if (threads > 1)
  for (Eigen::Index b = blocks - 1; b >= 0; --b) {
    int id = 0;
#ifdef _OPENMP
    id = omp_get_thread_num();
#endif
    const Eigen::Index i0 = b * block, ri = std::min(block, T - i0);
    auto Yi = scratch.middleRows(id * block, ri);
    Yi.noalias() = X.middleRows(i0, ri) * d.asDiagonal();
    G.block(i0, 0, ri, i0 + ri).noalias() = Yi * X.topRows(i0 + ri).transpose();
  }
  return G.selfadjointView<Eigen::Lower>();
}

}  // namespace factorwatch::engine::detail
