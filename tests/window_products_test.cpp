// Products carried between consecutive windows (window_products.h): after hundreds of
// shifts they equal freshly formed ones within the one-dot-product bound stated there
// (Higham 2002, eq. 3.5), any doubt about the overlap recomputes them, and fits that use
// them give the figures of fits that do not. Planted-structure data (simulated_model.h).
#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "factorwatch/engine/fit.h"
#include "factorwatch/engine/window_products.h"
#include "moments.h"
#include "prepare.h"
#include "simulated_model.h"

namespace {

using namespace factorwatch::engine;
using factorwatch::testing::simulate_planted_model;

ReturnsPanel rows_of(const ReturnsPanel& all, Eigen::Index first, Eigen::Index count) {
  ReturnsPanel p;
  p.assets = all.assets;
  p.values = all.values.middleRows(first, count);
  p.dates.assign(all.dates.begin() + first, all.dates.begin() + first + count);
  return p;
}

// |R_ab - z_a . z_b| <= gamma_N ||z_a|| ||z_b|| for the carried R and for the reference
// alike, so they differ by at most twice that.
void expect_within_dot_product_bound(const Eigen::MatrixXd& R, const ReturnsPanel& p) {
  const Eigen::MatrixXd reference = p.values * p.values.transpose();
  const double u = std::numeric_limits<double>::epsilon() / 2;
  const double gamma = double(p.width()) * u / (1.0 - double(p.width()) * u);
  const Eigen::VectorXd norms = p.values.rowwise().norm();
  ASSERT_EQ(R.rows(), reference.rows());
  double worst = 0;
  for (Eigen::Index a = 0; a < R.rows(); ++a)
    for (Eigen::Index b = 0; b < R.cols(); ++b)
      worst = std::max(worst, std::abs(R(a, b) - reference(a, b)) / (2 * gamma * norms[a] * norms[b]));
  EXPECT_LE(worst, 1.0);
}

TEST(WindowProducts, EqualFreshOnesAfterManyShifts) {
  const ReturnsPanel all = simulate_planted_model(700, 150, 3, 31).panel;
  const Eigen::Index T = 60;
  WindowProducts products;
  Eigen::Index first = 0;
  products.update(rows_of(all, first, T));
  EXPECT_EQ(products.last_update().computed_rows, T);
  for (int shift = 1; first + T + 3 <= all.periods(); ++shift) {
    const Eigen::Index step = shift % 10 == 0 ? 3 : 1;  // now and then a longer step
    first += step;
    const ReturnsPanel window = rows_of(all, first, T);
    const WindowProducts::Update& u = products.update(window);
    ASSERT_TRUE(u.usable);
    EXPECT_EQ(u.reused_rows, T - step);
    EXPECT_EQ(u.computed_rows, step);
    if (shift % 50 == 0 || first + T + 3 > all.periods()) expect_within_dot_product_bound(products.raw(), window);
  }
  EXPECT_GT(first, 600);  // several hundred shifts, no recomputation
}

TEST(WindowProducts, AnyDoubtAboutTheOverlapRecomputes) {
  const ReturnsPanel all = simulate_planted_model(100, 40, 2, 32).panel;
  const Eigen::Index T = 50;
  WindowProducts products;
  products.update(rows_of(all, 0, T));

  // The same window again: nothing to compute.
  EXPECT_EQ(products.update(rows_of(all, 0, T)).reused_rows, T);
  EXPECT_EQ(products.last_update().computed_rows, 0);

  // A revised return on a date both windows hold (its last digit).
  ReturnsPanel revised = rows_of(all, 1, T);
  revised.values(10, 7) = std::nextafter(revised.values(10, 7), 1.0);
  EXPECT_EQ(products.update(revised).reused_rows, 0);
  expect_within_dot_product_bound(products.raw(), revised);

  // The same assets in another order.
  ReturnsPanel swapped = rows_of(all, 2, T);
  std::swap(swapped.assets[0], swapped.assets[1]);
  swapped.values.col(0).swap(swapped.values.col(1));
  products.update(rows_of(all, 1, T));
  EXPECT_EQ(products.update(swapped).reused_rows, 0);
  expect_within_dot_product_bound(products.raw(), swapped);

  // A gap: the products describe nothing, and the next window starts afresh.
  ReturnsPanel gap = rows_of(all, 3, T);
  gap.values(T - 1, 3) = std::numeric_limits<double>::quiet_NaN();
  EXPECT_FALSE(products.update(gap).usable);
  EXPECT_EQ(products.update(rows_of(all, 4, T)).reused_rows, 0);

  // Backwards in time.
  EXPECT_EQ(products.update(rows_of(all, 2, T)).reused_rows, 0);
  expect_within_dot_product_bound(products.raw(), rows_of(all, 2, T));

  // More than a quarter of the window new: one blocked product, nothing reused.
  EXPECT_EQ(products.update(rows_of(all, 2 + T / 2, T)).reused_rows, 0);
}

// The Gram matrix the fit builds from carried products is X X' of the prepared panel
// (centred, weighted, excluded columns removed) to round-off, entry by entry: an error in
// the centring's constant term would hide in the null direction of the top eigenpairs.
TEST(WindowProducts, GramFromProductsIsThePreparedPanelsGram) {
  ReturnsPanel all = simulate_planted_model(200, 300, 4, 34).panel;
  all.values.col(5).setConstant(0.002);
  all.values.array() += 0.05;  // a large common mean: centring must remove it
  for (Weighting weighting : {Weighting::equal, Weighting::ewma}) {
    FitOptions o;
    o.weighting = weighting;
    o.half_life = 40;
    WindowProducts products;
    o.products = &products;
    for (Eigen::Index first = 0; first < 3; ++first) {
      const detail::PreparedData d = detail::prepare(rows_of(all, first, 120), o);
      const Eigen::MatrixXd* carried = d.moments->gram();
      ASSERT_NE(carried, nullptr);
      const Eigen::MatrixXd direct = detail::gram_matrix(*d.moments->panel());
      EXPECT_LT((*carried - direct).cwiseAbs().maxCoeff(), 1e-12 * direct.cwiseAbs().maxCoeff());
    }
  }
}

// Fits with carried products give the figures of fits without, window after window, for
// PCA and ML, equal and exponential weights, with a constant series the fit excludes.
struct Case {
  Method method;
  Weighting weighting;
};
class FitsWithCarriedProducts : public ::testing::TestWithParam<Case> {};
TEST_P(FitsWithCarriedProducts, MatchFitsWithout) {
  ReturnsPanel all = simulate_planted_model(400, 300, 4, 33).panel;
  all.values.col(17).setConstant(0.004);  // excluded: constant series
  FitOptions o;
  o.method = GetParam().method;
  o.factors = 4;
  o.weighting = GetParam().weighting;
  if (o.weighting == Weighting::ewma) o.half_life = 60;
  WindowProducts products;
  const Eigen::Index T = 150;
  for (Eigen::Index first = 0; first < 6; ++first) {
    const ReturnsPanel window = rows_of(all, first, T);
    FitOptions with = o;
    with.products = &products;
    const FactorFit carried = fit(window, with);
    const FactorFit fresh = fit(window, o);
    ASSERT_TRUE(carried.converged && fresh.converged) << carried.message << " / " << fresh.message;
    EXPECT_EQ(products.last_update().reused_rows, first == 0 ? 0 : T - 1);
    EXPECT_NE(carried.solver_path.find("carried window products"), std::string::npos) << carried.solver_path;
    EXPECT_EQ(fresh.solver_path.find("carried"), std::string::npos);
    ASSERT_EQ(carried.excluded.size(), 1u);
    EXPECT_LT(((carried.eigenvalues - fresh.eigenvalues).array() / fresh.eigenvalues.array()).abs().maxCoeff(), 1e-10);
    // PCA is closed form: round-off only. ML is iterative: both stop within the tolerance
    // of one optimum (tests/ml_default_accuracy_test.cpp holds it to 1e-6).
    const double tolerance = o.method == Method::pca ? 1e-10 : 1e-7;
    EXPECT_LT((carried.uniqueness - fresh.uniqueness).cwiseAbs().maxCoeff(), tolerance);
  }
}
INSTANTIATE_TEST_SUITE_P(MethodsAndWeights, FitsWithCarriedProducts,
                         ::testing::Values(Case{Method::pca, Weighting::equal}, Case{Method::pca, Weighting::ewma},
                                           Case{Method::max_likelihood, Weighting::equal},
                                           Case{Method::max_likelihood, Weighting::ewma}));

}  // namespace
