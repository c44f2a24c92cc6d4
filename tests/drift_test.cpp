// Drift between two aligned windows: the per-asset and per-factor changes on a hand-built
// pair (values hand-computed from the definitions in drift.h), congruence and principal
// angles on constructed loadings, statuses, and the ranking of the largest moves.
#include <gtest/gtest.h>

#include <cmath>
#include <stdexcept>

#include "factorwatch/engine/drift.h"

namespace {

namespace fe = factorwatch::engine;

Eigen::MatrixXd matrix(Eigen::Index rows, Eigen::Index cols, std::initializer_list<double> values) {
  Eigen::MatrixXd m(rows, cols);
  auto it = values.begin();
  for (Eigen::Index i = 0; i < rows; ++i)
    for (Eigen::Index j = 0; j < cols; ++j) m(i, j) = *it++;
  return m;
}

Eigen::VectorXd vector(std::initializer_list<double> values) {
  Eigen::VectorXd v(Eigen::Index(values.size()));
  Eigen::Index i = 0;
  for (const double x : values) v[i++] = x;
  return v;
}

// Two windows, k = 2. `now` has A, B, C, D; `then` has D, C, X, A (B is new, X is gone).
// Shared, in now's order: A, C, D.
fe::WindowFactors now_window() {
  fe::WindowFactors w;
  w.assets = {"A", "B", "C", "D"};
  w.loadings = matrix(4, 2, {1.0, 2.0,    //
                             9.0, 9.0,    // B: not shared
                             0.5, -1.0,   //
                             2.0, 0.0});  //
  w.scale = vector({2.0, 3.0, 0.5, 4.0});
  w.factor_covariance = matrix(2, 2, {2.0, 0.5, 0.5, 1.0});
  w.explained_share = vector({0.40, 0.15});
  return w;
}

fe::WindowFactors then_window() {
  fe::WindowFactors w;
  w.assets = {"D", "C", "X", "A"};
  w.loadings = matrix(4, 2, {1.0, 1.0,    // D
                             0.5, -0.5,   // C
                             7.0, 7.0,    // X: not shared
                             0.0, 2.0});  // A
  w.scale = vector({2.0, 0.25, 1.0, 2.0});
  w.factor_covariance = matrix(2, 2, {1.0, 0.0, 0.0, 1.5});
  w.explained_share = vector({0.35, 0.20});
  return w;
}

// Every expected value below is hand-computed from drift.h's definitions (now - then).
// Tolerance 1e-15: sums of a few exactly representable products.
TEST(CompareFactors, ChangesOnAHandBuiltPair) {
  const fe::DriftComparison d = fe::compare_factors(now_window(), then_window(), 2);
  ASSERT_EQ(d.status, fe::DriftStatus::compared) << d.message;
  EXPECT_STREQ(fe::to_string(d.status), "compared");
  ASSERT_EQ(d.assets, (std::vector<std::string>{"A", "C", "D"}));

  // Exposures: A (1, 2) - (0, 2); C (0.5, -1) - (0.5, -0.5); D (2, 0) - (1, 1).
  EXPECT_LT((d.exposure_change - matrix(3, 2, {1.0, 0.0, 0.0, -0.5, 1.0, -1.0})).cwiseAbs().maxCoeff(), 1e-15);
  // Standardized, each window by its own scale: A (0.5, 1) - (0, 1); C (1, -2) - (2, -2);
  // D (0.5, 0) - (0.5, 0.5).
  EXPECT_LT((d.standardized_change - matrix(3, 2, {0.5, 0.0, -1.0, 0.0, 0.0, -0.5})).cwiseAbs().maxCoeff(), 1e-15);
  // Communality l' Phi l. Now (Phi = [2 .5; .5 1]): A 2 + 2 + 4 = 8; C 0.5 - 0.5 + 1 = 1;
  // D 8. Then (Phi = diag(1, 1.5)): A 6; C 0.25 + 0.375 = 0.625; D 2.5.
  EXPECT_LT((d.communality_change - vector({2.0, 0.375, 5.5})).cwiseAbs().maxCoeff(), 1e-15);
  EXPECT_LT((d.factor_variance_change - vector({1.0, -0.5})).cwiseAbs().maxCoeff(), 1e-15);
  EXPECT_LT((d.explained_share_change - vector({0.05, -0.05})).cwiseAbs().maxCoeff(), 1e-15);

  // Congruence of the standardized loadings on A, C, D, hand-computed from Tucker's
  // formula: now z = (0.5, 1), (1, -2), (0.5, 0); then z = (0, 1), (2, -2), (0.5, 0.5).
  // Factor 1: (0 + 2 + 0.25) / sqrt(1.5 * 4.25); factor 2: (1 + 4 + 0) / sqrt(5 * 5.25).
  ASSERT_EQ(d.congruence.size(), 2);
  EXPECT_NEAR(d.congruence[0], 2.25 / std::sqrt(1.5 * 4.25), 1e-15);
  EXPECT_NEAR(d.congruence[1], 5.0 / std::sqrt(5.0 * 5.25), 1e-15);
  ASSERT_EQ(d.principal_angles_degrees.size(), 2);
  EXPECT_LE(d.principal_angles_degrees[0], d.principal_angles_degrees[1]);
  EXPECT_EQ(d.message.rfind("compared on 3 shared assets", 0), 0u) << d.message;
}

// A change of scale alone is not drift: the same standardized loadings with every
// volatility doubled give congruence 1 and angles 0 (exposures double, so they change).
TEST(CompareFactors, VolatilityChangeAloneIsNotFactorDrift) {
  fe::WindowFactors now = now_window(), then = now_window();
  now.loadings *= 2;
  now.scale *= 2;
  const fe::DriftComparison d = fe::compare_factors(now, then, 1);
  ASSERT_EQ(d.status, fe::DriftStatus::compared);
  EXPECT_LT((d.congruence.array() - 1).abs().maxCoeff(), 1e-15);
  EXPECT_LT(d.principal_angles_degrees.cwiseAbs().maxCoeff(), 1e-12);
  EXPECT_LT(d.standardized_change.cwiseAbs().maxCoeff(), 1e-15);
  EXPECT_LT((d.exposure_change - now_window().loadings).cwiseAbs().maxCoeff(), 1e-15);
}

// Rotating the factors by 30 degrees moves single factors but not the factor space:
// with orthogonal standardized columns of equal length, the congruence of z_j with the
// rotated column is cos 30 degrees for both factors (Tucker's formula), and the principal
// angles are 0 (the span is the same). Tolerances: rounding of 4 x 2 products.
TEST(CompareFactors, ARotationMovesFactorsButNotTheSpace) {
  fe::WindowFactors now;
  now.assets = {"A", "B", "C", "D"};
  now.loadings = matrix(4, 2, {1, 1, 1, -1, -1, 1, -1, -1});  // orthogonal, equal norms
  now.scale = Eigen::VectorXd::Ones(4);
  now.factor_covariance = Eigen::MatrixXd::Identity(2, 2);
  now.explained_share = vector({0.3, 0.3});
  fe::WindowFactors then = now;
  const double t = 30.0 * 3.14159265358979323846 / 180;
  then.loadings = now.loadings * matrix(2, 2, {std::cos(t), -std::sin(t), std::sin(t), std::cos(t)});
  const fe::DriftComparison d = fe::compare_factors(now, then, 4);
  ASSERT_EQ(d.status, fe::DriftStatus::compared);
  EXPECT_NEAR(d.congruence[0], std::sqrt(3.0) / 2, 1e-15);
  EXPECT_NEAR(d.congruence[1], std::sqrt(3.0) / 2, 1e-15);
  EXPECT_LT(d.principal_angles_degrees.cwiseAbs().maxCoeff(), 1e-12);

  // Replace then's second factor by a direction outside now's span: angles 0 and 90.
  then.loadings = matrix(4, 2, {1, 1, 1, -1, -1, -1, -1, 1});  // col 2 = (1, -1, -1, 1)
  then.loadings.col(0) = now.loadings.col(0);
  const fe::DriftComparison e = fe::compare_factors(now, then, 4);
  EXPECT_NEAR(e.principal_angles_degrees[0], 0, 1e-12);
  EXPECT_NEAR(e.principal_angles_degrees[1], 90, 1e-12);
}

TEST(CompareFactors, FactorCountsDiffer) {
  fe::WindowFactors then = then_window();
  then.loadings.conservativeResize(4, 1);
  then.factor_covariance = Eigen::MatrixXd::Identity(1, 1);
  then.explained_share = vector({0.5});
  const fe::DriftComparison d = fe::compare_factors(now_window(), then, 2);
  EXPECT_EQ(d.status, fe::DriftStatus::factors_differ);
  EXPECT_STREQ(fe::to_string(d.status), "factor counts differ");
  EXPECT_EQ(d.message, "now has 2 factors and then 1: not compared");
  EXPECT_TRUE(d.assets.empty());
  EXPECT_EQ(d.congruence.size(), 0);
  EXPECT_EQ(d.exposure_change.size(), 0);
}

TEST(CompareFactors, TooFewSharedAssets) {
  const fe::DriftComparison d = fe::compare_factors(now_window(), then_window(), 4);
  EXPECT_EQ(d.status, fe::DriftStatus::too_few_shared);
  EXPECT_STREQ(fe::to_string(d.status), "too few shared assets");
  EXPECT_EQ(d.message, "3 shared assets, fewer than the minimum 4: not compared");
  EXPECT_TRUE(d.assets.empty());
  EXPECT_EQ(d.communality_change.size(), 0);
  EXPECT_EQ(d.principal_angles_degrees.size(), 0);
  EXPECT_EQ(fe::largest_moves(d, 0, 5).size(), 0u);
  // No shared asset at all is never comparable, whatever minimum was asked for.
  fe::WindowFactors other = then_window();
  other.assets = {"P", "Q", "R", "S"};
  EXPECT_EQ(fe::compare_factors(now_window(), other, 0).status, fe::DriftStatus::too_few_shared);
}

TEST(CompareFactors, InconsistentInputThrows) {
  fe::WindowFactors bad = then_window();
  bad.scale = vector({1.0, 1.0});
  EXPECT_THROW(fe::compare_factors(now_window(), bad, 1), std::invalid_argument);
  bad = then_window();
  bad.scale[1] = 0;
  EXPECT_THROW(fe::compare_factors(now_window(), bad, 1), std::invalid_argument);
  bad = then_window();
  bad.factor_covariance = Eigen::MatrixXd::Identity(3, 3);
  EXPECT_THROW(fe::compare_factors(bad, now_window(), 1), std::invalid_argument);
}

// ---------------------------------------------------------------------------------------
// largest_moves: |change| descending, ties by asset name.

fe::DriftComparison moves_fixture() {
  fe::DriftComparison d;
  d.status = fe::DriftStatus::compared;
  d.assets = {"E", "B", "D", "A", "C"};
  d.standardized_change = matrix(5, 2, {0.1, 0.0,    // E
                                        -0.5, 0.3,   // B
                                        0.5, -0.4,   // D (ties B on factor 0)
                                        0.2, 0.0,    // A
                                        -0.5, 0.0});  // C (ties B and D on factor 0)
  d.exposure_change = 10 * d.standardized_change;
  return d;
}

TEST(LargestMoves, RanksByAbsoluteChangeWithTiesByName) {
  const fe::DriftComparison d = moves_fixture();
  const auto moves = fe::largest_moves(d, 0, 4);
  ASSERT_EQ(moves.size(), 4u);
  EXPECT_EQ(moves[0].asset, "B");  // |0.5| three ways: B, C, D by name
  EXPECT_EQ(moves[1].asset, "C");
  EXPECT_EQ(moves[2].asset, "D");
  EXPECT_EQ(moves[3].asset, "A");
  EXPECT_EQ(moves[0].standardized_change, -0.5);  // signed on a single factor
  EXPECT_EQ(moves[0].exposure_change, -5.0);
  EXPECT_EQ(moves[2].standardized_change, 0.5);

  const auto second = fe::largest_moves(d, 1, 2);
  ASSERT_EQ(second.size(), 2u);
  EXPECT_EQ(second[0].asset, "D");
  EXPECT_EQ(second[1].asset, "B");
}

// factor -1: the norm of the whole row. B and D: sqrt(0.34) and sqrt(0.41); C 0.5; A 0.2.
TEST(LargestMoves, AllFactorsRankByRowNorm) {
  const auto moves = fe::largest_moves(moves_fixture(), -1, 10);
  ASSERT_EQ(moves.size(), 5u);  // count beyond the assets gives them all
  const std::vector<std::string> order{"D", "B", "C", "A", "E"};
  for (std::size_t i = 0; i < order.size(); ++i) EXPECT_EQ(moves[i].asset, order[i]) << i;
  EXPECT_NEAR(moves[0].standardized_change, std::sqrt(0.41), 1e-15);
  EXPECT_NEAR(moves[0].exposure_change, 10 * std::sqrt(0.41), 1e-14);
  EXPECT_NEAR(moves[1].standardized_change, std::sqrt(0.34), 1e-15);
}

TEST(LargestMoves, OrderDoesNotDependOnRowOrder) {
  fe::DriftComparison d = moves_fixture(), shuffled = moves_fixture();
  // Reverse the rows; the ranking must be the same list.
  shuffled.assets.assign(d.assets.rbegin(), d.assets.rend());
  shuffled.standardized_change = d.standardized_change.colwise().reverse();
  shuffled.exposure_change = d.exposure_change.colwise().reverse();
  const auto a = fe::largest_moves(d, 0, 5), b = fe::largest_moves(shuffled, 0, 5);
  ASSERT_EQ(a.size(), b.size());
  for (std::size_t i = 0; i < a.size(); ++i) EXPECT_EQ(a[i].asset, b[i].asset) << i;
}

TEST(LargestMoves, FactorOutOfRangeThrows) {
  EXPECT_THROW(fe::largest_moves(moves_fixture(), 2, 3), std::invalid_argument);
  EXPECT_THROW(fe::largest_moves(moves_fixture(), -2, 3), std::invalid_argument);
  EXPECT_EQ(fe::largest_moves(moves_fixture(), 0, 0).size(), 0u);
}

// On a real comparison: the hand-built pair's largest standardized move on factor 0 is
// C (-1.0), then A (0.5), then D (0.0).
TEST(LargestMoves, OnACompareFactorsResult) {
  const auto moves = fe::largest_moves(fe::compare_factors(now_window(), then_window(), 2), 0, 3);
  ASSERT_EQ(moves.size(), 3u);
  EXPECT_EQ(moves[0].asset, "C");
  EXPECT_EQ(moves[0].standardized_change, -1.0);
  EXPECT_EQ(moves[0].exposure_change, 0.0);
  EXPECT_EQ(moves[1].asset, "A");
  EXPECT_EQ(moves[2].asset, "D");
}

}  // namespace
