#include "max_likelihood.h"

#include <cmath>

namespace factorwatch::engine::detail {
namespace {

struct Params {
  Eigen::MatrixXd L;
  Eigen::VectorXd psi;
};

// One EM map theta -> theta' with the log-likelihood of theta as a by-product:
// the single pass P = S B' over the panel gives both (S Psi^-1 L = P M).
class EmMap {
 public:
  EmMap(const SecondMoments& S, double floor_fraction)
      : S_(S), s_(S.diagonal()), floor_(floor_fraction * S.diagonal()) {}

  // Returns false on a numerical failure (M not positive definite).
  bool step(const Params& in, Params& out, double& loglik) {
    const Eigen::Index N = in.L.rows(), k = in.L.cols();
    const Eigen::VectorXd psi_inv = in.psi.cwiseInverse();
    const Eigen::MatrixXd LtPinv = in.L.transpose() * psi_inv.asDiagonal();  // k x N
    const Eigen::MatrixXd M = Eigen::MatrixXd::Identity(k, k) + LtPinv * in.L;
    const Eigen::LLT<Eigen::MatrixXd> llt(M);
    if (llt.info() != Eigen::Success) return false;
    const Eigen::MatrixXd B = llt.solve(LtPinv);  // k x N
    S_.multiply(B.transpose(), P_);              // N x k, the one pass
    const Eigen::MatrixXd BP = B * P_;           // B S B'
    const Eigen::MatrixXd Czz = Eigen::MatrixXd::Identity(k, k) - B * in.L + BP;
    const Eigen::LLT<Eigen::MatrixXd> czz(Czz);
    if (czz.info() != Eigen::Success) return false;

    const double log_det_m = 2.0 * llt.matrixLLT().diagonal().array().log().sum();
    const double log_det_sigma = log_det_m + in.psi.array().log().sum();
    const double trace_term = s_.cwiseProduct(psi_inv).sum() - (BP * M).trace();
    loglik = -0.5 * (double(N) * kLog2Pi + log_det_sigma + trace_term);

    out.L = czz.solve(P_.transpose()).transpose();
    out.psi = s_ - out.L.cwiseProduct(P_).rowwise().sum();
    out.psi = out.psi.cwiseMax(floor_);
    return std::isfinite(loglik) && out.L.allFinite() && out.psi.allFinite();
  }

  void project(Params& p) const { p.psi = p.psi.cwiseMax(floor_); }

 private:
  const SecondMoments& S_;
  Eigen::VectorXd s_, floor_;
  Eigen::MatrixXd P_;
};

double squared_distance(const Params& a, const Params& b) {
  return (a.L - b.L).squaredNorm() + (a.psi - b.psi).squaredNorm();
}

bool small_change(double before, double after, double tolerance) {
  return std::abs(after - before) <= tolerance * std::max(1.0, std::abs(after));
}

}  // namespace

double log_likelihood(const SecondMoments& S, const Eigen::MatrixXd& L, const Eigen::VectorXd& psi) {
  const Eigen::Index N = L.rows(), k = L.cols();
  const Eigen::VectorXd psi_inv = psi.cwiseInverse();
  const Eigen::MatrixXd W = psi_inv.asDiagonal() * L;  // Psi^-1 L
  const Eigen::MatrixXd M = Eigen::MatrixXd::Identity(k, k) + L.transpose() * W;
  const Eigen::LLT<Eigen::MatrixXd> llt(M);
  if (llt.info() != Eigen::Success) return std::nan("");
  Eigen::MatrixXd P;
  S.multiply(W, P);
  const Eigen::MatrixXd Q = W.transpose() * P;
  const double log_det_sigma =
      2.0 * llt.matrixLLT().diagonal().array().log().sum() + psi.array().log().sum();
  const double trace_term = S.diagonal().cwiseProduct(psi_inv).sum() - llt.solve(Q).trace();
  return -0.5 * (double(N) * kLog2Pi + log_det_sigma + trace_term);
}

void cold_start(const SecondMoments& S, const TopEigen& spectrum, double trace, int factors,
                Eigen::MatrixXd& L, Eigen::VectorXd& psi) {
  const Eigen::Index N = S.size();
  const double kept = spectrum.values.head(factors).sum();
  const double sigma2 = N > factors ? std::max(0.0, (trace - kept) / double(N - factors)) : 0.0;
  L = spectrum.vectors.leftCols(factors);
  for (int j = 0; j < factors; ++j)
    L.col(j) *= std::sqrt(std::max(spectrum.values[j] - sigma2, 0.0));
  psi = (S.diagonal() - L.rowwise().squaredNorm()).cwiseMax(0.05 * S.diagonal());
}

Estimate ml_estimate(const SecondMoments& S, Eigen::MatrixXd L, Eigen::VectorXd psi,
                     const FitOptions& options) {
  Estimate e;
  EmMap em(S, options.specific_floor);
  Params theta{std::move(L), std::move(psi)};
  em.project(theta);
  Params next, next2, jump, jump_next;
  double ll = 0, ll_next = 0, ll_jump = 0, previous = -INFINITY;
  int passes = 0;
  e.termination = Termination::iteration_limit;
  e.message = "iteration limit reached before the tolerance";

  while (passes < options.max_iterations) {
    if (!em.step(theta, next, ll)) {
      e.termination = Termination::numerical_failure;
      e.message = "non-finite or indefinite intermediate in the EM step";
      break;
    }
    ++passes;
    if (small_change(previous, ll, options.tolerance)) {
      theta = std::move(next);  // one more monotone step, already paid for
      e.termination = Termination::converged;
      e.message = "relative change of the log-likelihood below the tolerance";
      break;
    }
    previous = ll;
    if (!options.accelerate || passes + 2 > options.max_iterations) {
      theta = std::move(next);
      continue;
    }
    // SQUAREM, scheme S3: alpha = -|r| / |v|, with r = F(t) - t, v = F(F(t)) - 2F(t) + t.
    if (!em.step(next, next2, ll_next)) {
      theta = std::move(next);
      continue;
    }
    ++passes;
    const double r2 = squared_distance(next, theta);
    Params v{next2.L - 2.0 * next.L + theta.L, next2.psi - 2.0 * next.psi + theta.psi};
    const double v2 = v.L.squaredNorm() + v.psi.squaredNorm();
    double alpha = v2 > 0 ? -std::sqrt(r2 / v2) : -1.0;
    alpha = std::min(alpha, -1.0);  // alpha = -1 is the plain double EM step
    bool accepted = false;
    if (alpha < -1.0) {
      jump.L = theta.L - 2.0 * alpha * (next.L - theta.L) + alpha * alpha * v.L;
      jump.psi = theta.psi - 2.0 * alpha * (next.psi - theta.psi) + alpha * alpha * v.psi;
      em.project(jump);
      // Stabilising EM step from the extrapolated point; keep it only if the
      // likelihood did not fall (the monotonicity safeguard).
      if (em.step(jump, jump_next, ll_jump)) {
        ++passes;
        if (ll_jump >= ll_next) {
          theta = std::move(jump_next);
          accepted = true;
        }
      }
    }
    if (!accepted) theta = std::move(next2);
  }
  e.iterations = passes;
  e.loadings = std::move(theta.L);
  e.specific_variance = std::move(theta.psi);
  apply_specific_floor(S.diagonal(), options.specific_floor, e.specific_variance, e.heywood);
  return e;
}

}  // namespace factorwatch::engine::detail
