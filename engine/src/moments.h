// The basis matrix S (covariance or correlation of the window), seen only through
// products with thin matrices, so that wide panels never form N x N.
#pragma once

#include <Eigen/Dense>
#include <memory>

#include "factorwatch/engine/panel.h"

namespace factorwatch::engine::detail {

class SecondMoments {
 public:
  virtual ~SecondMoments() = default;
  virtual Eigen::Index size() const = 0;
  // diag(S): the variances s_ii on the basis scale.
  virtual const Eigen::VectorXd& diagonal() const = 0;
  // out = S * V for a thin V (N x m).
  virtual void multiply(const Eigen::MatrixXd& V, Eigen::MatrixXd& out) const = 0;
  // y = S x for one vector (the eigen-solver's operator).
  virtual void multiply_vector(const double* x, double* y) const = 0;
  // The dense N x N matrix; forms it from the panel when not stored (cost N^2 T).
  virtual Eigen::MatrixXd dense() const = 0;
  // The panel X with S = X'X, or nullptr when S was given as a matrix.
  virtual const RowMatrix* panel() const { return nullptr; }
  // X X' when it was formed ahead (from carried window products), else nullptr.
  virtual const Eigen::MatrixXd* gram() const { return nullptr; }
};

// S = X'X, X the centred, weighted, gap-filled T x N panel (see prepare.h).
class PanelMoments final : public SecondMoments {
 public:
  explicit PanelMoments(RowMatrix X);
  // With diag(X'X) already known (the preparation computed the variances).
  PanelMoments(RowMatrix X, Eigen::VectorXd diagonal);
  Eigen::Index size() const override { return X_.cols(); }
  const Eigen::VectorXd& diagonal() const override { return diag_; }
  void multiply(const Eigen::MatrixXd& V, Eigen::MatrixXd& out) const override;
  void multiply_vector(const double* x, double* y) const override;
  Eigen::MatrixXd dense() const override;
  const RowMatrix* panel() const override { return &X_; }
  const Eigen::MatrixXd* gram() const override { return G_.size() ? &G_ : nullptr; }
  // Hands over X X' formed another way (it must equal X X' to round-off).
  void set_gram(Eigen::MatrixXd G) { G_ = std::move(G); }

 private:
  RowMatrix X_;
  Eigen::VectorXd diag_;
  Eigen::MatrixXd G_;
};

// S given as a dense symmetric matrix.
class DenseMoments final : public SecondMoments {
 public:
  explicit DenseMoments(Eigen::MatrixXd S);
  Eigen::Index size() const override { return S_.rows(); }
  const Eigen::VectorXd& diagonal() const override { return diag_; }
  void multiply(const Eigen::MatrixXd& V, Eigen::MatrixXd& out) const override;
  void multiply_vector(const double* x, double* y) const override;
  Eigen::MatrixXd dense() const override { return S_; }

 private:
  Eigen::MatrixXd S_;
  Eigen::VectorXd diag_;
};

// X X' (T x T), the Gram twin of X'X: same nonzero eigenvalues.
Eigen::MatrixXd gram_matrix(const RowMatrix& X);

// X diag(d) X' (T x T) without a scaled copy of the panel: each task scales one row
// block into `scratch` (resized to threads x block rows by N, and kept by the caller
// so that repeated calls reuse memory already touched; a fresh panel-sized buffer
// costs more in page faults than the product on the machines we measured).
Eigen::MatrixXd scaled_gram_matrix(const RowMatrix& X, const Eigen::VectorXd& d, RowMatrix& scratch);

}  // namespace factorwatch::engine::detail
