#include "canonical.h"

#include <algorithm>
#include <numeric>
#include <vector>

namespace factorwatch::engine::detail {

void rotate_to_principal_axes(Eigen::MatrixXd& L, const Eigen::VectorXd& psi) {
  const Eigen::MatrixXd G = L.transpose() * psi.cwiseInverse().asDiagonal() * L;
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(G);
  if (es.info() != Eigen::Success) return;
  L = L * es.eigenvectors();
}

void order_and_fix_signs(Eigen::MatrixXd& L) {
  const Eigen::Index k = L.cols();
  const Eigen::VectorXd variance = L.colwise().squaredNorm().transpose();
  std::vector<Eigen::Index> order(static_cast<std::size_t>(k));
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(),
                   [&](Eigen::Index a, Eigen::Index b) { return variance[a] > variance[b]; });
  Eigen::MatrixXd out(L.rows(), k);
  for (Eigen::Index j = 0; j < k; ++j) {
    const Eigen::VectorXd c = L.col(order[std::size_t(j)]);
    out.col(j) = canonical_sign(c) * c;
  }
  L = std::move(out);
}

double canonical_sign(const Eigen::Ref<const Eigen::VectorXd>& c) {
  const double sum = c.sum();
  if (std::abs(sum) > 1e-9 * c.cwiseAbs().sum()) return sum < 0 ? -1.0 : 1.0;
  Eigen::Index at = 0;
  c.cwiseAbs().maxCoeff(&at);
  return c[at] < 0 ? -1.0 : 1.0;
}

}  // namespace factorwatch::engine::detail
