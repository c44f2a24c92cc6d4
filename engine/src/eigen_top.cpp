#include "eigen_top.h"

#include "panel_kernels.h"

#include <Spectra/MatOp/DenseSymMatProd.h>
#include <Spectra/SymEigsSolver.h>

#include <algorithm>
#include <cmath>
#include <random>

namespace factorwatch::engine::detail {
namespace {

// Spectra's operator concept over S - diag(shift), never forming S.
class ShiftedMomentsOp {
 public:
  using Scalar = double;
  ShiftedMomentsOp(const SecondMoments& S, const Eigen::VectorXd* shift) : S_(S), shift_(shift) {}
  Eigen::Index rows() const { return S_.size(); }
  Eigen::Index cols() const { return S_.size(); }
  void perform_op(const double* x, double* y) const {
    S_.multiply_vector(x, y);
    if (shift_) {
      for (Eigen::Index i = 0; i < S_.size(); ++i) y[i] -= (*shift_)[i] * x[i];
    }
  }

 private:
  const SecondMoments& S_;
  const Eigen::VectorXd* shift_;
};

// Deterministic start vector from the seed: reproducible across runs and platforms.
Eigen::VectorXd start_vector(Eigen::Index n, unsigned seed) {
  std::mt19937_64 rng(seed);
  Eigen::VectorXd v(n);
  for (Eigen::Index i = 0; i < n; ++i) v[i] = double(rng() >> 11) * 0x1.0p-53 - 0.5;
  return v;
}

// Runs Spectra, widening the Krylov subspace on failure. Returns ok=false if every
// attempt leaves some pair unconverged.
template <typename Op>
TopEigen spectra_top(Op& op, int count, unsigned seed, const std::string& label) {
  TopEigen out;
  const Eigen::Index n = op.rows();
  const Eigen::VectorXd v0 = start_vector(n, seed);
  Eigen::Index ncv = std::min<Eigen::Index>(n, std::max<Eigen::Index>(2 * count + 1, 20));
  for (int attempt = 0; attempt < 3; ++attempt) {
    Spectra::SymEigsSolver<Op> solver(op, count, ncv);
    solver.init(v0.data());
    const Eigen::Index converged = solver.compute(Spectra::SortRule::LargestAlge, 1000, 1e-12);
    if (solver.info() == Spectra::CompInfo::Successful && converged == count) {
      out.values = solver.eigenvalues();
      out.vectors = solver.eigenvectors();
      out.ok = true;
      out.path = label + (attempt ? " (subspace " + std::to_string(ncv) + " after retry)" : "");
      return out;
    }
    out.problem = label + ": " + std::to_string(converged) + " of " + std::to_string(count) +
                  " eigenpairs converged with subspace " + std::to_string(ncv);
    if (ncv >= n) break;
    ncv = std::min<Eigen::Index>(n, 2 * ncv);
  }
  return out;
}

}  // namespace

TopEigen dense_top_eigenpairs(const Eigen::MatrixXd& A, int count) {
  TopEigen out;
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(A);
  if (es.info() != Eigen::Success) {
    out.problem = "dense eigen-solver failed";
    return out;
  }
  const Eigen::Index n = A.rows();
  count = int(std::min<Eigen::Index>(count, n));
  out.values = es.eigenvalues().reverse().head(count);
  out.vectors = es.eigenvectors().rowwise().reverse().leftCols(count);
  out.ok = true;
  out.path = "dense";
  return out;
}

TopEigen top_eigenpairs(const SecondMoments& S, int count, int vectors_needed,
                        const Eigen::VectorXd* shift, SolverChoice choice, unsigned seed) {
  const Eigen::Index N = S.size();
  count = int(std::min<Eigen::Index>(count, N));
  vectors_needed = std::min(vectors_needed, count);
  const RowMatrix* X = S.panel();

  auto dense_route = [&]() {
    Eigen::MatrixXd A = S.dense();
    if (shift) A.diagonal() -= *shift;
    TopEigen r = dense_top_eigenpairs(A, count);
    r.path = X ? "dense (N x N covariance formed from the panel)" : "dense (given matrix)";
    return r;
  };
  // Spectra needs nev < n; tiny problems go dense whatever was asked.
  if (choice == SolverChoice::dense || count >= N - 1) return dense_route();
  if (choice == SolverChoice::automatic && N <= kDenseLimit) return dense_route();

  const bool gram_possible = X && !shift && X->rows() < N;
  if (choice == SolverChoice::automatic && gram_possible && count < X->rows() - 1) {
    // Nonzero eigenvalues of X'X equal those of X X'; v = X'u / sqrt(lambda).
    const Eigen::MatrixXd* carried = S.gram();
    const Eigen::MatrixXd formed = carried ? Eigen::MatrixXd() : gram_matrix(*X);
    const Eigen::MatrixXd& G = carried ? *carried : formed;
    Spectra::DenseSymMatProd<double> op(G);
    TopEigen r = spectra_top(op, count, seed,
                             carried ? "spectra on the T x T gram matrix (from the carried window products)"
                                     : "spectra on the T x T gram matrix");
    if (!r.ok) {
      r = dense_top_eigenpairs(G, count);
      r.path = "dense on the T x T gram matrix (spectra did not converge)";
    }
    if (r.ok) {
      Eigen::MatrixXd V;
      const Eigen::MatrixXd U = r.vectors.leftCols(vectors_needed);
      if (!transpose_product(*X, U, V)) V.noalias() = X->transpose() * U;
      for (int j = 0; j < vectors_needed; ++j) {
        const double lambda = r.values[j];
        V.col(j) /= lambda > 0 ? std::sqrt(lambda) : std::max(V.col(j).norm(), 1e-300);
      }
      r.vectors = V;
      return r;
    }
  }

  TopEigen r;
  if (choice == SolverChoice::automatic && X && N <= kFormedLimit) {
    Eigen::MatrixXd A = S.dense();
    if (shift) A.diagonal() -= *shift;
    Spectra::DenseSymMatProd<double> op(A);
    r = spectra_top(op, count, seed, "spectra on the N x N covariance formed from the panel");
  } else {
    ShiftedMomentsOp op(S, shift);
    r = spectra_top(op, count, seed, X ? "spectra, matrix-free on the panel" : "spectra on the stored matrix");
  }
  if (r.ok) return r;
  // Last resort: the dense solver, when the matrix fits in memory comfortably.
  if (N <= 20000) {
    TopEigen d = dense_route();
    d.path += " (fallback: " + r.problem + ")";
    return d;
  }
  return r;
}

}  // namespace factorwatch::engine::detail
