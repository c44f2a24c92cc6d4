// Planted-structure recovery on the demo universe (invented data; see
// demo-universe/README.md): a fit of a window recovers the loadings planted for
// that window, before and after the structural change, with gaps, listings and
// delistings in the panel.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <unordered_map>

#include "factorwatch/engine/fit.h"
#include "generator.h"
#include "linear_algebra_checks.h"

namespace {

using namespace factorwatch::engine;
using factorwatch::demo::DemoUniverse;

const DemoUniverse& universe() {
  static const DemoUniverse u = factorwatch::demo::generate_demo_universe({});
  return u;
}

ReturnsPanel window(const DemoUniverse& u, int first, int count) {
  ReturnsPanel p;
  p.assets = u.assets;
  p.dates.assign(u.dates.begin() + first, u.dates.begin() + first + count);
  p.values = u.values.middleRows(first, count);
  return p;
}

// Rows of the planted loadings for the fitted assets, matched by name.
Eigen::MatrixXd planted_rows(const DemoUniverse& u, const Eigen::MatrixXd& planted, const FactorFit& f) {
  std::unordered_map<std::string, Eigen::Index> row;
  for (std::size_t i = 0; i < u.assets.size(); ++i) row[u.assets[i]] = Eigen::Index(i);
  Eigen::MatrixXd out(Eigen::Index(f.assets.size()), planted.cols());
  for (std::size_t i = 0; i < f.assets.size(); ++i) out.row(Eigen::Index(i)) = planted.row(row.at(f.assets[i]));
  return out;
}

struct Recovery {
  double sine = 1;       // largest principal angle, fitted vs planted loadings
  double predicted = 0;  // the spiked-covariance prediction for the weakest direction
};

// Paul (2007), "Asymptotics of sample eigenstructure for a large dimensional spiked
// covariance model", Statistica Sinica 17, Theorem 4: with noise variance sigma^2,
// gamma = N/T and a spike of size ell = lambda / sigma^2 above the detection edge
// sqrt(gamma), the squared cosine between the sample and the population eigenvector
// tends to (1 - gamma / ell^2) / (1 + gamma / ell). The weakest planted direction
// (smallest eigenvalue of L'L) sets the largest principal angle. The demo's specific
// variances are unequal, so sigma^2 is taken as their mean.
double predicted_sine(const Eigen::MatrixXd& planted, const Eigen::VectorXd& psi, double gamma) {
  const double sigma2 = psi.mean();
  const double ell = Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>(planted.transpose() * planted)
                         .eigenvalues()
                         .minCoeff() /
                     sigma2;
  const double cos2 = (1.0 - gamma / (ell * ell)) / (1.0 + gamma / ell);
  return std::sqrt(std::max(0.0, 1.0 - cos2));
}

Recovery recovery(Method method, int first, bool after) {
  const DemoUniverse& u = universe();
  FitOptions o;
  o.method = method;
  o.factors = int(u.loadings_after.cols());
  const FactorFit f = fit(window(u, first, 504), o);
  EXPECT_TRUE(f.converged) << f.BriefReport();
  EXPECT_GT(f.assets.size(), 500u);
  const Eigen::MatrixXd planted = planted_rows(u, after ? u.loadings_after : u.loadings_before, f);
  Recovery r;
  r.sine = factorwatch::testing::largest_subspace_sine(f.loadings, planted);
  r.predicted = predicted_sine(planted, u.specific_variance, double(f.assets.size()) / 504.0);
  return r;
}

// Tolerance: the fitted subspace may exceed the spiked-model prediction (about 0.36
// for the default universe at T = 504) by 0.1 for ML and principal axis, which model
// the unequal specific variances; by 0.15 for principal components, which do not.
// The margin covers the gaps (0.3%), the late listings and the unequal noise.
TEST(DemoRecovery, LatestWindowRecoversLoadingsAfterTheChange) {
  const int T = int(universe().dates.size());
  const Recovery ml = recovery(Method::max_likelihood, T - 504, true);
  EXPECT_GT(ml.predicted, 0.2);  // the demo's weakest factor is a real test
  EXPECT_LT(ml.predicted, 0.5);
  EXPECT_LT(ml.sine, ml.predicted + 0.1);
  const Recovery pa = recovery(Method::principal_axis, T - 504, true);
  EXPECT_LT(pa.sine, pa.predicted + 0.1);
  const Recovery pc = recovery(Method::pca, T - 504, true);
  EXPECT_LT(pc.sine, pc.predicted + 0.15);
}

TEST(DemoRecovery, FirstWindowRecoversLoadingsBeforeTheChange) {
  ASSERT_GT(universe().change_index, 504);
  const Recovery ml = recovery(Method::max_likelihood, 0, false);
  EXPECT_LT(ml.sine, ml.predicted + 0.1);
}

// The change is real: the latest window's fit is much further from the loadings
// planted before the change than from those after it (measured 0.76 against 0.37 at
// seed 7; the 0.25 margin is well outside the sampling error of either).
TEST(DemoRecovery, LatestWindowIsFarFromTheOldLoadings) {
  const int T = int(universe().dates.size());
  const Recovery now = recovery(Method::max_likelihood, T - 504, true);
  const Recovery old = recovery(Method::max_likelihood, T - 504, false);
  EXPECT_GT(old.sine, now.sine + 0.25);
}

}  // namespace
