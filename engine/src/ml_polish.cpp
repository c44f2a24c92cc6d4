#include "ml_polish.h"

#include <cmath>
#include <vector>

namespace factorwatch::engine::detail {
namespace {

// F, its gradient and the spectrum it came from, at one x = log psi.
struct Concentrated {
  bool ok = false;
  double F = 0;
  Eigen::VectorXd gradient;  // dF/dx
  Eigen::VectorXd gamma;     // eigenvalues of S*, largest first
  Eigen::MatrixXd V;         // matching eigenvectors
  Eigen::MatrixXd Sstar;
};

Concentrated evaluate(const Eigen::MatrixXd& S, int k, const Eigen::VectorXd& x) {
  Concentrated c;
  const Eigen::Index N = S.rows();
  const Eigen::VectorXd d = (-0.5 * x).array().exp();
  c.Sstar = d.asDiagonal() * S * d.asDiagonal();
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eig(c.Sstar);
  if (eig.info() != Eigen::Success) return c;
  c.gamma = eig.eigenvalues().reverse();
  c.V = eig.eigenvectors().rowwise().reverse();
  // The profile needs g_k > 1 (a positive loading column) and S positive definite (the
  // discarded g_j enter through log g_j).
  if (!(c.gamma[k - 1] > 1.0) || !(c.gamma[N - 1] > 0.0)) return c;
  c.F = 0;
  for (Eigen::Index j = k; j < N; ++j) c.F += c.gamma[j] - std::log(c.gamma[j]) - 1.0;
  const Eigen::MatrixXd Vk = c.V.leftCols(k);
  const Eigen::VectorXd excess = c.gamma.head(k).array() - 1.0;
  c.gradient = -((c.Sstar.diagonal().array() - 1.0).matrix() - Vk.cwiseAbs2() * excess);
  c.ok = std::isfinite(c.F) && c.gradient.allFinite();
  return c;
}

Eigen::MatrixXd hessian(const Concentrated& c, int k) {
  const Eigen::Index N = c.V.rows();
  const Eigen::MatrixXd Vk = c.V.leftCols(k);
  const Eigen::MatrixXd U = c.V.rightCols(N - k);
  const Eigen::MatrixXd outside = Eigen::MatrixXd::Identity(N, N) - Vk * Vk.transpose();
  Eigen::MatrixXd H = (c.Sstar - Vk * c.gamma.head(k).asDiagonal() * Vk.transpose()).cwiseProduct(outside);
  Eigen::VectorXd f(N - k);
  Eigen::MatrixXd Uf(N, N - k), R(N, N);
  for (int m = 0; m < k; ++m) {
    const double gm = c.gamma[m];
    for (Eigen::Index j = 0; j < N - k; ++j) {
      const double g = c.gamma[k + j];
      f[j] = (g - 1.0) * (g + gm) / (g - gm);
    }
    Uf = U * f.asDiagonal();
    R.noalias() = Uf * U.transpose();
    H += (c.V.col(m) * c.V.col(m).transpose()).cwiseProduct(R);
  }
  return H;
}

}  // namespace

PolishOutcome newton_polish(const Eigen::MatrixXd& S, int factors, const Eigen::VectorXd& floor,
                            Eigen::VectorXd psi, double target, int max_steps) {
  PolishOutcome out;
  const Eigen::Index N = S.rows();
  const int k = factors;
  const Eigen::VectorXd lower = floor.array().log();
  Eigen::VectorXd x = psi.cwiseMax(floor).array().log();
  Concentrated c = evaluate(S, k, x);
  if (!c.ok) {
    out.problem = "the concentrated likelihood is not defined at the start (a factor without excess variance)";
    return out;
  }
  for (;;) {
    // Held: at the floor and pulled below it; the criterion and the step ignore those.
    std::vector<Eigen::Index> free;
    double worst = 0;
    for (Eigen::Index i = 0; i < N; ++i) {
      if (x[i] <= lower[i] + 1e-12 && c.gradient[i] > 0) continue;
      free.push_back(i);
      worst = std::max(worst, 0.5 * std::abs(c.gradient[i]));
    }
    if (worst <= target) break;
    if (out.steps >= max_steps) {
      out.problem = "Newton steps exhausted before the target";
      return out;
    }
    const Eigen::Index n = Eigen::Index(free.size());
    const Eigen::MatrixXd H = hessian(c, k);
    Eigen::MatrixXd Hf(n, n);
    Eigen::VectorXd gf(n);
    for (Eigen::Index a = 0; a < n; ++a) {
      gf[a] = c.gradient[free[a]];
      for (Eigen::Index b = 0; b < n; ++b) Hf(a, b) = H(free[a], free[b]);
    }
    // Away from the optimum H can be indefinite: shift it until it factors (a
    // Levenberg-Marquardt safeguard); at a regular optimum no shift is needed.
    Eigen::LLT<Eigen::MatrixXd> llt(Hf);
    double shift = 1e-8 * std::max(1.0, Hf.diagonal().cwiseAbs().maxCoeff());
    while (llt.info() != Eigen::Success && shift < 1e8) {
      llt.compute(Hf + shift * Eigen::MatrixXd::Identity(n, n));
      shift *= 10;
    }
    if (llt.info() != Eigen::Success) {
      out.problem = "the Hessian of the concentrated likelihood could not be made positive definite";
      return out;
    }
    const Eigen::VectorXd step = -llt.solve(gf);
    const double slope = gf.dot(step);  // < 0: a descent direction
    // Backtracking (Armijo) on F, projecting onto the floor.
    double t = 1.0;
    Concentrated trial;
    Eigen::VectorXd candidate;
    bool accepted = false;
    for (int halving = 0; halving < 40; ++halving, t *= 0.5) {
      candidate = x;
      for (Eigen::Index a = 0; a < n; ++a)
        candidate[free[a]] = std::max(lower[free[a]], x[free[a]] + t * step[a]);
      trial = evaluate(S, k, candidate);
      if (!trial.ok) continue;
      // Near the optimum the decrease the step promises (about -slope / 2) is below what F
      // resolves in double precision; there a smaller gradient is the test of progress.
      const bool unresolved = -slope <= 1e-10 * (1.0 + std::abs(c.F));
      if (unresolved ? trial.gradient.cwiseAbs().maxCoeff() < c.gradient.cwiseAbs().maxCoeff()
                     : trial.F <= c.F + 1e-4 * t * slope) {
        accepted = true;
        break;
      }
    }
    if (!accepted) {
      // At round-off level F cannot resolve the last step; the gradient decides.
      out.problem = "no decrease of the concentrated likelihood along the Newton step";
      return out;
    }
    x = std::move(candidate);
    c = std::move(trial);
    ++out.steps;
  }
  out.psi = x.array().exp();
  const Eigen::VectorXd root = out.psi.cwiseSqrt();
  out.loadings = root.asDiagonal() * c.V.leftCols(k) *
                 (c.gamma.head(k).array() - 1.0).sqrt().matrix().asDiagonal();
  out.ok = out.loadings.allFinite() && out.psi.allFinite();
  if (!out.ok) out.problem = "non-finite values after the Newton steps";
  return out;
}

}  // namespace factorwatch::engine::detail
