#include "principal_axis.h"


#include <cmath>
#include <memory>

namespace factorwatch::engine::detail {
namespace {

// Communalities may not exceed s_ii (1 - floor): beyond that the specific
// variance would fall under the floor, which is the Heywood case.
void cap_communality(const Eigen::VectorXd& s, double floor_fraction, Eigen::VectorXd& h) {
  h = h.cwiseMax(0.0).cwiseMin((1.0 - floor_fraction) * s);
}

}  // namespace

Estimate principal_axis_estimate(const SecondMoments& S, const TopEigen& spectrum,
                                 const FitOptions& options) {
  const Eigen::Index N = S.size();
  const int k = options.factors;
  const Eigen::VectorXd& s = S.diagonal();
  Estimate e;

  // The dense matrix is kept when it is cheap, so each iteration only shifts its diagonal.
  const bool dense = options.solver == SolverChoice::dense ||
                     (options.solver == SolverChoice::automatic && N <= kFormedLimit);
  Eigen::MatrixXd Sd;
  if (dense) Sd = S.dense();

  Eigen::VectorXd h;
  std::string start;
  if (dense) {
    const Eigen::LDLT<Eigen::MatrixXd> ldlt(Sd);
    if (ldlt.info() == Eigen::Success && ldlt.isPositive() &&
        ldlt.vectorD().minCoeff() > 1e-12 * ldlt.vectorD().maxCoeff()) {
      const Eigen::MatrixXd inv = ldlt.solve(Eigen::MatrixXd::Identity(N, N));
      h = s - inv.diagonal().cwiseInverse();
      start = "squared multiple correlations";
    }
  }
  if (h.size() == 0) {
    h = (spectrum.vectors.leftCols(k) * spectrum.values.head(k).cwiseMax(0.0).cwiseSqrt().asDiagonal())
            .rowwise()
            .squaredNorm();
    start = "principal-component communalities (S singular or too large to invert)";
  }
  cap_communality(s, options.specific_floor, h);

  // Past the dense limit the formed matrix moves into an operator for Spectra (no copy).
  std::unique_ptr<DenseMoments> formed;
  if (dense && options.solver != SolverChoice::dense && N > kDenseLimit && k < N - 1)
    formed = std::make_unique<DenseMoments>(std::move(Sd));

  e.termination = Termination::iteration_limit;
  e.message = "iteration limit reached before the tolerance; started from " + start;
  TopEigen top;
  for (int it = 1; it <= options.max_iterations; ++it) {
    const Eigen::VectorXd psi = s - h;
    if (dense && !formed) {
      Eigen::MatrixXd A = Sd;
      A.diagonal() -= psi;
      top = dense_top_eigenpairs(A, k);
      top.path = "principal axis, dense eigen-decomposition of the formed matrix";
    } else if (formed) {
      top = top_eigenpairs(*formed, k, k, &psi, SolverChoice::matrix_free, options.seed);
      top.path = "principal axis, " + top.path + " (S formed once)";
    } else {
      top = top_eigenpairs(S, k, k, &psi, SolverChoice::matrix_free, options.seed);
      top.path = "principal axis, " + top.path;
    }
    if (!top.ok) {
      e.termination = Termination::numerical_failure;
      e.message = top.problem;
      e.iterations = it;
      break;
    }
    Eigen::MatrixXd L = top.vectors.leftCols(k);
    for (int j = 0; j < k; ++j) L.col(j) *= std::sqrt(std::max(top.values[j], 0.0));
    Eigen::VectorXd h_new = L.rowwise().squaredNorm();
    cap_communality(s, options.specific_floor, h_new);
    const double change = ((h_new - h).cwiseAbs().array() / s.array()).maxCoeff();
    h = h_new;
    e.loadings = L;
    e.iterations = it;
    if (change < options.tolerance) {
      e.termination = Termination::converged;
      e.message = "largest change of a communality (share of variance) below the tolerance; "
                  "started from " + start;
      break;
    }
  }
  e.solver_path = top.path;
  e.specific_variance = s - e.loadings.rowwise().squaredNorm();
  apply_specific_floor(s, options.specific_floor, e.specific_variance, e.heywood);
  return e;
}

}  // namespace factorwatch::engine::detail
