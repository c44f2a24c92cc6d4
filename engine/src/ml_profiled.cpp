#include "ml_profiled.h"

#include <cmath>

#include "eigen_top.h"
#include "max_likelihood.h"
#include "panel_kernels.h"

namespace factorwatch::engine::detail {
namespace {

struct MapValue {
  bool ok = false;
  Eigen::MatrixXd L;      // L(psi)
  Eigen::VectorXd image;  // psi'
  double criterion = 0;
  double log_likelihood = 0;  // per observation, at (L(psi), psi)
};

// One evaluation. `scratch` is the scaled-row workspace of scaled_gram_matrix, kept
// across evaluations.
MapValue apply_map(const RowMatrix& X, const Eigen::VectorXd& s, const Eigen::VectorXd& floor,
                   const Eigen::VectorXd& psi, int k, unsigned seed, RowMatrix& scratch) {
  MapValue m;
  const DenseMoments G(scaled_gram_matrix(X, psi.cwiseInverse(), scratch));  // X Psi^-1 X'
  const TopEigen top = top_eigenpairs(G, k, k, nullptr, SolverChoice::matrix_free, seed);
  if (!top.ok || !(top.values[k - 1] > 0)) return m;
  // The eigenvectors of S* are v_j = Psi^-1/2 X' u_j / sqrt(g_j), so the Psi^1/2 in L(psi)
  // cancels: L = X' U diag(sqrt((g - 1) / g)).
  if (!transpose_product(X, top.vectors, m.L)) m.L.noalias() = X.transpose() * top.vectors;
  for (int j = 0; j < k; ++j) {
    const double g = top.values[j];
    m.L.col(j) *= std::sqrt(std::max(g - 1.0, 0.0) / g);
  }
  m.log_likelihood = profiled_log_likelihood(top.values.head(k), psi, s);
  const Eigen::VectorXd specific = s - m.L.rowwise().squaredNorm();
  m.image = specific.cwiseMax(floor);
  for (Eigen::Index i = 0; i < psi.size(); ++i) {
    const double g = 0.5 * (specific[i] / psi[i] - 1.0);  // psi_i dl/dpsi_i at L(psi)
    if (!held_at_floor(psi[i], floor[i], g)) m.criterion = std::max(m.criterion, std::abs(g));
  }
  m.ok = m.L.allFinite() && m.image.allFinite() && std::isfinite(m.log_likelihood);
  return m;
}

}  // namespace

double profiled_log_likelihood(const Eigen::VectorXd& top_eigenvalues, const Eigen::VectorXd& psi,
                               const Eigen::VectorXd& s) {
  double eigen_terms = 0;
  for (Eigen::Index j = 0; j < top_eigenvalues.size(); ++j) {
    const double gp = std::max(top_eigenvalues[j], 1.0);
    eigen_terms += std::log(gp) - gp + 1.0;
  }
  return -0.5 * (double(psi.size()) * kLog2Pi + psi.array().log().sum() + eigen_terms + s.cwiseQuotient(psi).sum());
}

ProfiledOutcome profiled_fixed_point(const SecondMoments& S, const Eigen::VectorXd& floor, Eigen::VectorXd psi,
                                     int factors, double target, int max_evaluations, unsigned seed) {
  ProfiledOutcome out;
  const RowMatrix& X = *S.panel();
  const Eigen::VectorXd& s = S.diagonal();
  psi = psi.cwiseMax(floor);
  RowMatrix scratch;
  auto fail = [&](const char* why) {
    out.problem = why;
    return out;
  };
  auto done = [&](const Eigen::VectorXd& at, const MapValue& m) {
    out.ok = true;
    out.loadings = m.L;
    out.psi = at;
    out.criterion = m.criterion;
    return out;
  };
  auto evaluate = [&](const Eigen::VectorXd& at) {
    ++out.evaluations;
    return apply_map(X, s, floor, at, factors, seed, scratch);
  };
  const char* const lost = "the top eigenpairs of the scaled Gram matrix were not found";
  // Every evaluation measures the criterion at its input, so the loop stops at the first
  // point that meets it, whichever step produced that point.
  MapValue a = evaluate(psi);
  while (true) {
    if (!a.ok) return fail(lost);
    if (a.criterion <= target) return done(psi, a);
    if (out.evaluations + 2 > max_evaluations) {
      if (out.evaluations >= max_evaluations) break;
      psi = a.image;
      a = evaluate(psi);
      continue;
    }
    // SQUAREM (scheme S3) on psi, in units of s_ii so that every asset weighs alike.
    const MapValue b = evaluate(a.image);
    if (!b.ok) return fail(lost);
    if (b.criterion <= target) return done(a.image, b);
    const Eigen::VectorXd r = (a.image - psi).cwiseQuotient(s);
    const Eigen::VectorXd v = (b.image - 2.0 * a.image + psi).cwiseQuotient(s);
    const double alpha = std::min(-1.0, v.norm() > 0 ? -r.norm() / v.norm() : -1.0);
    const Eigen::VectorXd jump = (psi - 2.0 * alpha * r.cwiseProduct(s) + alpha * alpha * v.cwiseProduct(s)).cwiseMax(floor);
    // Keep the extrapolated point only if its profiled likelihood is not below that of the
    // plain step's point a.image (whose profile b.L is known). Its evaluation then starts
    // the next cycle; otherwise the plain double step's end b.image does.
    MapValue c = evaluate(jump);
    if (c.ok && c.log_likelihood >= b.log_likelihood) {
      psi = jump;
      a = std::move(c);
    } else {
      if (out.evaluations >= max_evaluations) break;
      psi = b.image;
      a = evaluate(psi);
    }
  }
  return fail("evaluation limit reached before the target");
}

}  // namespace factorwatch::engine::detail
