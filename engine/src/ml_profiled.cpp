#include "ml_profiled.h"

#include <cmath>

#include "eigen_top.h"
#include "max_likelihood.h"

namespace factorwatch::engine::detail {
namespace {

struct MapValue {
  bool ok = false;
  Eigen::MatrixXd L;      // L(psi)
  Eigen::VectorXd image;  // psi'
  double criterion = 0;
};

MapValue apply_map(const RowMatrix& X, const Eigen::VectorXd& s, const Eigen::VectorXd& floor,
                   const Eigen::VectorXd& psi, int k, unsigned seed) {
  MapValue m;
  const Eigen::VectorXd d = psi.cwiseInverse().cwiseSqrt();
  RowMatrix Y = X * d.asDiagonal();  // X Psi^-1/2
  const DenseMoments G(gram_matrix(Y));
  const TopEigen top = top_eigenpairs(G, k, k, nullptr, SolverChoice::matrix_free, seed);
  if (!top.ok || !(top.values[k - 1] > 0)) return m;
  // The eigenvectors of S* are v_j = Psi^-1/2 X' u_j / sqrt(g_j), so the Psi^1/2 in L(psi)
  // cancels: L = X' U diag(sqrt((g - 1) / g)).
  m.L.noalias() = X.transpose() * top.vectors;
  for (int j = 0; j < k; ++j) {
    const double g = top.values[j];
    m.L.col(j) *= std::sqrt(std::max(g - 1.0, 0.0) / g);
  }
  const Eigen::VectorXd specific = s - m.L.rowwise().squaredNorm();
  m.image = specific.cwiseMax(floor);
  for (Eigen::Index i = 0; i < psi.size(); ++i) {
    const double g = 0.5 * (specific[i] / psi[i] - 1.0);  // psi_i dl/dpsi_i at L(psi)
    if (!held_at_floor(psi[i], floor[i], g)) m.criterion = std::max(m.criterion, std::abs(g));
  }
  m.ok = m.L.allFinite() && m.image.allFinite();
  return m;
}

}  // namespace

ProfiledOutcome profiled_fixed_point(const SecondMoments& S, const Eigen::VectorXd& floor, Eigen::VectorXd psi,
                                     int factors, double target, int max_evaluations, unsigned seed) {
  ProfiledOutcome out;
  const RowMatrix& X = *S.panel();
  const Eigen::VectorXd& s = S.diagonal();
  psi = psi.cwiseMax(floor);
  auto fail = [&](const char* why) {
    out.problem = why;
    return out;
  };
  while (out.evaluations < max_evaluations) {
    const MapValue a = apply_map(X, s, floor, psi, factors, seed);
    ++out.evaluations;
    if (!a.ok) return fail("the top eigenpairs of the scaled Gram matrix were not found");
    if (a.criterion <= target) {
      out.ok = true;
      out.loadings = a.L;
      out.psi = psi;
      out.criterion = a.criterion;
      return out;
    }
    if (out.evaluations + 2 > max_evaluations) {
      psi = a.image;
      continue;
    }
    // SQUAREM (scheme S3) on psi, in units of s_ii so that every asset weighs alike.
    const MapValue b = apply_map(X, s, floor, a.image, factors, seed);
    ++out.evaluations;
    if (!b.ok) return fail("the top eigenpairs of the scaled Gram matrix were not found");
    const Eigen::VectorXd r = (a.image - psi).cwiseQuotient(s);
    const Eigen::VectorXd v = (b.image - 2.0 * a.image + psi).cwiseQuotient(s);
    const double alpha = std::min(-1.0, v.norm() > 0 ? -r.norm() / v.norm() : -1.0);
    const Eigen::VectorXd jump = (psi - 2.0 * alpha * r.cwiseProduct(s) + alpha * alpha * v.cwiseProduct(s)).cwiseMax(floor);
    // Keep the extrapolated point only if its profiled likelihood is not below that of the
    // plain double step's start a.image (whose profile b.L is known).
    const MapValue c = apply_map(X, s, floor, jump, factors, seed);
    ++out.evaluations;
    const double l_jump = c.ok ? log_likelihood(S, c.L, jump) : -INFINITY;
    const double l_plain = log_likelihood(S, b.L, a.image);
    psi = (c.ok && l_jump >= l_plain) ? c.image : b.image;
  }
  return fail("evaluation limit reached before the target");
}

}  // namespace factorwatch::engine::detail
