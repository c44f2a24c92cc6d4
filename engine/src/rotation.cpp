// Varimax and promax as R's stats::varimax and stats::promax compute them (R 4.2.2), so
// that our rotated loadings can be checked against R's column for column, plus the
// engine's canonical form for fitted windows and the change of factor basis.
#include "factorwatch/engine/rotation.h"

#include "canonical.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <sstream>
#include <stdexcept>
#include <vector>

namespace factorwatch::engine {
namespace {

struct Varimax {
  Eigen::MatrixXd rotation;  // T, orthogonal
  int iterations = 0;
  bool converged = true;
};

// stats::varimax: with x the (row-normalised) loadings and p its rows, repeat
//   z = x T;  B = x' (z^3 - z diag(colSums(z^2)) / p);  B = U S V';  T = U V'
// until d = sum(S) grows by less than eps relative (d < dpast (1 + eps)). U V' is the
// orthogonal matrix that maximises tr(T' B) (the Procrustes solution), and d is that
// maximum; at a fixed point tr(T' B) = sum z^4 - sum_j colSums(z^2)_j^2 / p, which is p
// times Kaiser's (1958) varimax criterion: the sum over columns of the variance of the
// squared loadings.
Varimax varimax(const Eigen::MatrixXd& loadings, const RotationOptions& options) {
  const Eigen::Index k = loadings.cols();
  Varimax out;
  out.rotation = Eigen::MatrixXd::Identity(k, k);
  // One factor (or none) has nothing to rotate; no rows, nothing to rotate by. R returns
  // x unchanged for one column.
  if (k < 2 || loadings.rows() == 0) return out;

  Eigen::MatrixXd x = loadings;
  if (options.kaiser_normalize) {
    // Row lengths sqrt(communality). R divides by them blindly; a zero row (an asset no
    // factor explains) would become NaN and poison B, so it stays zero here: it adds
    // nothing to B either way, and only p, the row count, still includes it (as R's
    // raw varimax does).
    for (Eigen::Index i = 0; i < x.rows(); ++i) {
      const double length = x.row(i).norm();
      if (length > 0) x.row(i) /= length;
    }
  }
  const double p = double(x.rows());
  double d = 0;
  out.converged = false;
  for (int iteration = 1; iteration <= options.max_iterations; ++iteration) {
    const Eigen::MatrixXd z = x * out.rotation;
    const Eigen::RowVectorXd column_sums = z.cwiseAbs2().colwise().sum();
    const Eigen::MatrixXd B =
        x.transpose() * (z.array().cube().matrix() - z * (column_sums / p).asDiagonal());
    const Eigen::JacobiSVD<Eigen::MatrixXd> svd(B, Eigen::ComputeFullU | Eigen::ComputeFullV);
    out.rotation = svd.matrixU() * svd.matrixV().transpose();
    out.iterations = iteration;
    const double past = d;
    d = svd.singularValues().sum();
    // d = 0 only when B = 0 (all loadings zero, say): the criterion is flat to first
    // order and T stays as it is; R would sweep on to its limit without changing T.
    if (d < past * (1 + options.tolerance) || d == 0) {
      out.converged = true;
      break;
    }
  }
  return out;
}

// (T' T)^-1 by a Cholesky solve: the correlations of factors whose loadings are L T when
// L's factors are uncorrelated with unit variance (print.factanal's tmat %*% t(tmat) with
// tmat = solve(T)). Symmetrised against rounding.
Eigen::MatrixXd factor_correlation_of(const Eigen::MatrixXd& T) {
  const Eigen::LLT<Eigen::MatrixXd> llt(T.transpose() * T);
  const Eigen::MatrixXd phi = llt.solve(Eigen::MatrixXd::Identity(T.cols(), T.cols()));
  return 0.5 * (phi + phi.transpose());
}

// stats::promax after the varimax step: the target Q = x |x|^(m-1) of the varimax loadings
// x, U = the least-squares solution of x U = Q (lm.fit), its columns rescaled by
// sqrt(diag((U'U)^-1)) so that the rotated factors have unit variance. Returns nothing
// where R's promax stops or returns NA: x of deficient column rank (fewer assets than
// factors, a zero column, columns dependent to lm.fit's tolerance) or U'U singular to
// solve()'s tolerance (a factor with negligible loadings).
std::optional<Eigen::MatrixXd> promax_step(const Eigen::MatrixXd& x, double m) {
  const Eigen::Index k = x.cols();
  const Eigen::VectorXd norms = x.colwise().norm().transpose();
  if (x.rows() < k || !(norms.minCoeff() > 0)) return std::nullopt;
  // lm.fit's rank test: a column counts when its part independent of the columns before
  // it is above tol = 1e-7 of its own norm. Scaling the columns to unit norm first makes
  // Eigen's test (relative to the largest pivot) the same kind of test.
  const Eigen::VectorXd inverse_norms = norms.cwiseInverse();
  Eigen::ColPivHouseholderQR<Eigen::MatrixXd> qr(x * inverse_norms.asDiagonal());
  qr.setThreshold(1e-7);
  if (qr.rank() < k) return std::nullopt;
  // std::pow entry by entry, as R's ^ (Eigen's vectorised pow is not correctly rounded).
  const Eigen::MatrixXd target = x.unaryExpr([m](double v) { return v * std::pow(std::abs(v), m - 1); });
  Eigen::MatrixXd U = inverse_norms.asDiagonal() * qr.solve(target);
  const Eigen::LLT<Eigen::MatrixXd> llt(U.transpose() * U);
  // solve() in R refuses a matrix whose reciprocal condition number is below the machine
  // epsilon; so do we.
  if (llt.info() != Eigen::Success || !(llt.rcond() >= std::numeric_limits<double>::epsilon()))
    return std::nullopt;
  const Eigen::VectorXd d = llt.solve(Eigen::MatrixXd::Identity(k, k)).diagonal();
  U = U * d.cwiseSqrt().asDiagonal();
  return U;
}

void check(const RotationOptions& options) {
  std::string error;
  if (!options.IsValid(&error)) throw std::invalid_argument(error);
}

}  // namespace

RotationResult rotate_loadings(const Eigen::MatrixXd& loadings, const RotationOptions& options) {
  check(options);
  const Eigen::Index k = loadings.cols();
  RotationResult r;
  r.method = options.method;
  r.matrix = Eigen::MatrixXd::Identity(k, k);
  r.factor_correlation = Eigen::MatrixXd::Identity(k, k);
  if (options.method != RotationMethod::none) {
    const Varimax v = varimax(loadings, options);
    r.matrix = v.rotation;
    r.iterations = v.iterations;
    r.converged = v.converged;
    if (options.method == RotationMethod::promax && k >= 2) {
      // R's promax rotates the varimax loadings it got back (z, not L T_v); here L T_v:
      // the same numbers to rounding, and loadings = L T stays exact.
      const std::optional<Eigen::MatrixXd> U = promax_step(loadings * v.rotation, options.promax_power);
      if (U) {
        r.matrix = v.rotation * *U;
        r.factor_correlation = factor_correlation_of(r.matrix);
      } else {
        r.method = RotationMethod::varimax;  // what was applied: R's promax stops here
      }
    }
  }
  r.loadings = loadings * r.matrix;
  r.structure = r.loadings * r.factor_correlation;
  return r;
}

RotationResult rotate_fit_loadings(const Eigen::MatrixXd& standardized_loadings, const RotationOptions& options) {
  RotationResult r = rotate_loadings(standardized_loadings, options);
  const Eigen::Index k = r.loadings.cols();
  // Variance explained by each rotated factor: its column sum of squares times its
  // variance (1 for these; kept general so the rule reads as in the header).
  const Eigen::VectorXd variance =
      (r.loadings.colwise().squaredNorm().transpose().array() * r.factor_correlation.diagonal().array()).matrix();
  std::vector<Eigen::Index> order(static_cast<std::size_t>(k));
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(),
                   [&](Eigen::Index a, Eigen::Index b) { return variance[a] > variance[b]; });
  // The signed permutation P: column j of the result is sign_j times column order[j].
  // Sign rule of canonical.cpp (detail::canonical_sign): column sum positive; when the
  // sum is negligible (below 1e-9 of the absolute sum), the largest entry positive.
  Eigen::MatrixXd P = Eigen::MatrixXd::Zero(k, k);
  for (Eigen::Index j = 0; j < k; ++j) {
    const Eigen::Index from = order[std::size_t(j)];
    P(from, j) = detail::canonical_sign(r.loadings.col(from));
  }
  // Products with a signed permutation only move and negate entries: exact.
  r.matrix = r.matrix * P;
  r.loadings = r.loadings * P;
  r.factor_correlation = P.transpose() * r.factor_correlation * P;
  r.structure = r.structure * P;
  return r;
}

void apply_factor_transform(const Eigen::MatrixXd& transform, Eigen::MatrixXd& loadings,
                            Eigen::MatrixXd& factor_covariance) {
  const Eigen::Index k = transform.rows();
  if (transform.cols() != k || loadings.cols() != k || factor_covariance.rows() != k ||
      factor_covariance.cols() != k) {
    std::ostringstream os;
    os << "factor transform is " << transform.rows() << " x " << transform.cols() << ", loadings have "
       << loadings.cols() << " columns and the factor covariance is " << factor_covariance.rows() << " x "
       << factor_covariance.cols() << ": all must be k x k for the same k";
    throw std::invalid_argument(os.str());
  }
  const Eigen::FullPivLU<Eigen::MatrixXd> lu(transform);
  if (!lu.isInvertible()) throw std::invalid_argument("factor transform is singular: it must be invertible");
  // T^-1 Phi T^-T as two solves: A = T^-1 Phi, then T^-1 A' = T^-1 Phi' T^-T, the transpose
  // of what we want (and equal to it for a symmetric Phi).
  const Eigen::MatrixXd A = lu.solve(factor_covariance);
  const Eigen::MatrixXd moved = lu.solve(A.transpose()).transpose();
  // A covariance is symmetric; keep it exactly so for the Cholesky factorisations downstream.
  factor_covariance = 0.5 * (moved + moved.transpose());
  loadings = loadings * transform;
}

}  // namespace factorwatch::engine
