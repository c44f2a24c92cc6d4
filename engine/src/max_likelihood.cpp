#include "max_likelihood.h"

#include "ml_polish.h"
#include "ml_profiled.h"

#include <cmath>
#include <string>

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
    double unused;
    return step(in, out, loglik, unused);
  }

  // The same, with the largest scaled gradient of the log-likelihood at `in` (see
  // stationarity below).
  bool step(const Params& in, Params& out, double& loglik, double& gradient) {
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

    gradient = stationarity(in, psi_inv, B, BP);

    out.L = czz.solve(P_.transpose()).transpose();
    out.psi = s_ - out.L.cwiseProduct(P_).rowwise().sum();
    out.psi = out.psi.cwiseMax(floor_);
    return std::isfinite(loglik) && out.L.allFinite() && out.psi.allFinite();
  }

  void project(Params& p) const { p.psi = p.psi.cwiseMax(floor_); }
  const Eigen::VectorXd& floor() const { return floor_; }

  // Largest scaled partial derivative of the per-observation log-likelihood l at
  // theta = (L, psi), from the step's products (P = S W M^-1 with W = Psi^-1 L,
  // B = M^-1 W', BP = B S B'); with A = Sigma^-1:
  //   dl/dpsi_i = -1/2 [A - A S A]_ii,   dl/dL = -(A - A S A) L = -(B' - Psi^-1 P + B' W' P).
  // Scaled to be free of the assets' units: psi_i dl/dpsi_i (a derivative in log psi_i)
  // and sqrt(s_ii) |dl/dL_i.| (the row's Euclidean norm, unchanged by a rotation of the
  // factors). A specific variance held at its floor whose derivative
  // points below the floor is at its constrained optimum and does not count (held_at_floor).
  double stationarity(const Params& in, const Eigen::VectorXd& psi_inv, const Eigen::MatrixXd& B,
                      const Eigen::MatrixXd& BP) const {
    const Eigen::MatrixXd Bt = B.transpose();                       // W M^-1, N x k
    const Eigen::VectorXd bl = Bt.cwiseProduct(in.L).rowwise().sum();  // psi_i [A L]_i . L_i / psi_i
    const Eigen::VectorXd pl = P_.cwiseProduct(in.L).rowwise().sum();
    const Eigen::VectorXd lbl = (in.L * BP).cwiseProduct(in.L).rowwise().sum();
    double worst = 0;
    for (Eigen::Index i = 0; i < in.psi.size(); ++i) {
      const double g = -0.5 * (1.0 - bl[i] - (s_[i] - 2.0 * pl[i] + lbl[i]) * psi_inv[i]);
      if (!held_at_floor(in.psi[i], floor_[i], g)) worst = std::max(worst, std::abs(g));
    }
    const Eigen::MatrixXd PinvP = psi_inv.asDiagonal() * P_;  // Psi^-1 P, N x k
    const Eigen::MatrixXd WtP = in.L.transpose() * PinvP;    // W' P = L' Psi^-1 P, k x k
    const Eigen::MatrixXd gL = -(Bt - PinvP + Bt * WtP);
    for (Eigen::Index i = 0; i < gL.rows(); ++i) worst = std::max(worst, std::sqrt(s_[i]) * gL.row(i).norm());
    return worst;
  }

 private:
  const SecondMoments& S_;
  Eigen::VectorXd s_, floor_;
  Eigen::MatrixXd P_;
};

double squared_distance(const Params& a, const Params& b) {
  return (a.L - b.L).squaredNorm() + (a.psi - b.psi).squaredNorm();
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
  Params measured;  // the last point whose criterion is known
  double ll = 0, ll_next = 0, ll_jump = 0;
  int passes = 0, newton_steps = 0;
  // The Newton stage needs S dense (and positive definite, which it checks); its width
  // limit is justified in max_likelihood.h.
  const Eigen::Index N = S.size();
  const bool can_polish = options.polish && N <= kPolishMaxWidth && N > options.factors + 1;
  Eigen::MatrixXd dense;
  double polish_tried_at = INFINITY;  // gradient at the last failed Newton stage
  e.termination = Termination::iteration_limit;
  e.message = "iteration limit reached before the tolerance";

  // Wide universes: the fixed point in psi alone first (ml_profiled.h); EM then measures
  // the full criterion at its result and goes on only if that is still above the tolerance.
  int profile_steps = 0;
  if (options.accelerate && S.panel() && N > kPolishMaxWidth) {
    ProfiledOutcome p = profiled_fixed_point(S, em.floor(), theta.psi, options.factors, 0.5 * options.tolerance,
                                             std::min(kProfileMaxEvaluations, options.max_iterations - 1),
                                             options.seed);
    profile_steps = p.evaluations;
    if (p.ok) theta = Params{std::move(p.loadings), std::move(p.psi)};
  }

  while (passes + newton_steps + profile_steps < options.max_iterations) {
    double grad = 0;
    if (!em.step(theta, next, ll, grad)) {
      e.termination = Termination::numerical_failure;
      e.message = "non-finite or indefinite intermediate in the EM step";
      break;
    }
    ++passes;
    e.largest_scaled_gradient = grad;
    measured = theta;
    if (grad <= options.tolerance) {
      // theta itself is returned, so the reported criterion is the returned point's.
      e.termination = Termination::converged;
      e.message = "largest scaled gradient of the log-likelihood below the tolerance";
      break;
    }
    if (can_polish && grad <= kPolishEntry && grad < 0.1 * polish_tried_at) {
      if (dense.size() == 0) dense = S.dense();
      polish_tried_at = grad;
      PolishOutcome p = newton_polish(dense, options.factors, em.floor(), theta.psi, 0.1 * options.tolerance,
                                      std::min(kPolishMaxSteps, options.max_iterations - passes - newton_steps - profile_steps));
      newton_steps += p.steps;
      if (p.ok) {
        theta.L = std::move(p.loadings);
        theta.psi = std::move(p.psi);
        continue;  // the next EM evaluation measures the criterion at the polished point
      }
    }
    // A SQUAREM cycle takes up to two more passes; the limit counts every step taken.
    if (!options.accelerate || passes + newton_steps + profile_steps + 2 > options.max_iterations) {
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
  // Stopped by the limit: hand back the point the reported criterion belongs to (the
  // extrapolated or polished point after it has not been measured).
  if (e.termination == Termination::iteration_limit && measured.L.size() > 0) theta = std::move(measured);
  if (newton_steps > 0)
    e.message += " (" + std::to_string(passes) + " EM passes, " + std::to_string(newton_steps) + " Newton steps)";
  else if (profile_steps > 0)
    e.message += " (" + std::to_string(profile_steps) + " steps of the fixed point in psi, " + std::to_string(passes) +
                 " EM passes)";
  e.iterations = passes + newton_steps + profile_steps;
  e.profile_steps = profile_steps;
  e.em_passes = passes;
  e.newton_steps = newton_steps;
  e.loadings = std::move(theta.L);
  e.specific_variance = std::move(theta.psi);
  apply_specific_floor(S.diagonal(), options.specific_floor, e.specific_variance, e.heywood);
  return e;
}

}  // namespace factorwatch::engine::detail
