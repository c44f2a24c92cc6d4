// The hand-written panel kernels against Eigen's plain products (the reference
// here is Eigen's own GEMM), across widths that exercise the vector tails, the
// single- and multi-threaded paths, and the fallback for wide V.
#include <gtest/gtest.h>

#include "moments.h"
#include "panel_kernels.h"

namespace {

using factorwatch::engine::RowMatrix;
using namespace factorwatch::engine::detail;

struct Shape {
  Eigen::Index T, N;
  int m;
};

class PanelKernels : public ::testing::TestWithParam<Shape> {};

// Tolerance 1e-13 relative to the largest entry: both sum T*N products of O(1)
// numbers in different orders; rounding is ~sqrt(T N) eps.
TEST_P(PanelKernels, MatchEigen) {
  const Shape s = GetParam();
  const RowMatrix X = RowMatrix::Random(s.T, s.N);
  const Eigen::MatrixXd V = Eigen::MatrixXd::Random(s.N, s.m);
  const Eigen::MatrixXd expected = X.transpose() * (X * V);
  Eigen::MatrixXd got;
  PanelMoments(X).multiply(V, got);  // kernel, or the fallback for m > 16
  EXPECT_LT((got - expected).cwiseAbs().maxCoeff(), 1e-13 * expected.cwiseAbs().maxCoeff());

  const Eigen::MatrixXd U = Eigen::MatrixXd::Random(s.T, s.m);
  const Eigen::MatrixXd expected_t = X.transpose() * U;
  Eigen::MatrixXd got_t;
  if (transpose_product(X, U, got_t)) {
    EXPECT_LE(s.m, kKernelMaxColumns);
    EXPECT_LT((got_t - expected_t).cwiseAbs().maxCoeff(), 1e-13 * expected_t.cwiseAbs().maxCoeff());
  } else {
    EXPECT_GT(s.m, kKernelMaxColumns);
  }

  // X diag(d) X' without the scaled copy, twice with one scratch (the second call
  // reuses memory the first one sized).
  RowMatrix scratch;
  for (int round = 0; round < 2; ++round) {
    const Eigen::VectorXd d = Eigen::VectorXd::Random(s.N).array() + 1.5;
    const Eigen::MatrixXd expected_g = X * d.asDiagonal() * X.transpose();
    const Eigen::MatrixXd got_g = scaled_gram_matrix(X, d, scratch);
    EXPECT_LT((got_g - expected_g).cwiseAbs().maxCoeff(), 1e-13 * expected_g.cwiseAbs().maxCoeff());
    EXPECT_EQ(got_g, got_g.transpose());
  }
}

INSTANTIATE_TEST_SUITE_P(Shapes, PanelKernels,
                         ::testing::Values(Shape{7, 5, 1}, Shape{13, 37, 3}, Shape{60, 250, 10},
                                           Shape{504, 601, 7}, Shape{504, 2003, 16},
                                           Shape{333, 1000, 17}, Shape{1, 9, 2}));

}  // namespace
