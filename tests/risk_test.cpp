// Portfolio risk in a factor model, Sigma = L Phi L' + Psi: the invariants the formula
// implies, the dense formula itself, change of factor basis, holdings the model does not
// cover, active weights and trades, and planted structure (returns drawn from a known model).
//
// The models here are invented (seeded random loadings and specific variances): the
// checks are identities of the formula, which hold for any model. The external check on
// published data is tests/risk_reference_test.cpp.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <iostream>
#include <limits>
#include <random>
#include <stdexcept>

#include "factorwatch/engine/factor_basis.h"
#include "factorwatch/engine/fit.h"
#include "factorwatch/engine/risk.h"
#include "simulated_model.h"

namespace {

namespace fw = factorwatch::engine;

std::string asset_name(int i) {
  char s[8];
  std::snprintf(s, sizeof s, "A%03d", i);
  return s;
}

// An invented fit: N assets, k factors (a positive first column, like a market factor),
// specific volatilities of 1-2% and the given factor covariance (empty: orthogonal).
fw::FactorFit invented_fit(int N, int k, unsigned seed, const Eigen::MatrixXd& phi = {}) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal;
  std::uniform_real_distribution<double> uniform(0.0, 1.0);
  fw::FactorFit f;
  f.factors = k;
  f.loadings.resize(N, k);
  f.specific_variance.resize(N);
  for (int i = 0; i < N; ++i) {
    f.assets.push_back(asset_name(i));
    for (int j = 0; j < k; ++j) f.loadings(i, j) = 0.01 * (j == 0 ? 0.5 + uniform(rng) : 0.7 * normal(rng));
    f.specific_variance[i] = std::pow(0.01 + 0.01 * uniform(rng), 2);
  }
  f.factor_covariance = phi;
  return f;
}

// A correlation matrix with sizeable off-diagonal entries (what promax serves).
Eigen::MatrixXd oblique_correlation(int k, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal;
  Eigen::MatrixXd A = Eigen::MatrixXd::Identity(k, k);
  for (int i = 0; i < k; ++i)
    for (int j = 0; j < k; ++j) A(i, j) += 0.5 * normal(rng);
  const Eigen::MatrixXd C = A * A.transpose();
  const Eigen::VectorXd d = C.diagonal().cwiseSqrt().cwiseInverse();
  return d.asDiagonal() * C * d.asDiagonal();
}

// n distinct assets of the model in random order with normal weights (long and short).
fw::Holdings random_holdings(const fw::RiskModel& model, int n, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal;
  std::vector<std::string> names = model.assets();
  std::shuffle(names.begin(), names.end(), rng);
  fw::Holdings h;
  for (int i = 0; i < n; ++i) h.push_back({names[std::size_t(i)], 0.05 * normal(rng)});
  return h;
}

// The model's covariance formed densely: L Phi L' + Psi (N x N; small N only).
Eigen::MatrixXd dense_sigma(const fw::RiskModel& m) {
  Eigen::MatrixXd S = m.loadings() * m.factor_covariance() * m.loadings().transpose();
  S.diagonal() += m.specific_variance();
  return S;
}

// The holdings as a dense N-vector over the model's rows (unmodelled ones dropped).
Eigen::VectorXd dense_weights(const fw::RiskModel& m, const fw::Holdings& h) {
  Eigen::VectorXd w = Eigen::VectorXd::Zero(Eigen::Index(m.assets().size()));
  for (const fw::Holding& x : h)
    if (m.row_of(x.asset) >= 0) w[m.row_of(x.asset)] += x.weight;
  return w;
}

double sum_of(const std::vector<fw::AssetContribution>& v, double fw::AssetContribution::*field) {
  double s = 0;
  for (const auto& a : v) s += a.*field;
  return s;
}
double sum_of(const std::vector<fw::FactorContribution>& v, double fw::FactorContribution::*field) {
  double s = 0;
  for (const auto& a : v) s += a.*field;
  return s;
}

// ---------------------------------------------------------------------------------------
// Invariants of the Euler allocation (common practice: volatility is homogeneous of degree
// one in the weights, so sum_i w_i d sigma / d w_i = sigma, Euler's theorem). Exact up to
// rounding: sums of a few dozen double products, so 1e-12 relative leaves ample room.

void expect_parts_add_up(const fw::PortfolioRisk& r) {
  const double total = r.total.variance, sigma = r.total.volatility;
  ASSERT_GT(total, 0);
  EXPECT_NEAR(total, r.systematic.variance + r.specific.variance, 1e-14 * total);
  EXPECT_NEAR(sigma, std::sqrt(total), 1e-15 * sigma);
  EXPECT_NEAR(sum_of(r.by_asset, &fw::AssetContribution::volatility), sigma, 1e-12 * sigma);
  EXPECT_NEAR(sum_of(r.by_factor, &fw::FactorContribution::volatility) + r.specific_volatility_contribution, sigma,
              1e-12 * sigma);
  EXPECT_NEAR(sum_of(r.by_asset, &fw::AssetContribution::variance), total, 1e-12 * total);
  EXPECT_NEAR(sum_of(r.by_asset, &fw::AssetContribution::systematic_variance), r.systematic.variance, 1e-12 * total);
  EXPECT_NEAR(sum_of(r.by_asset, &fw::AssetContribution::specific_variance), r.specific.variance, 1e-12 * total);
  EXPECT_NEAR(sum_of(r.by_factor, &fw::FactorContribution::variance), r.systematic.variance, 1e-12 * total);
  EXPECT_NEAR(sum_of(r.by_asset, &fw::AssetContribution::share), 1.0, 1e-12);
  EXPECT_NEAR(sum_of(r.by_factor, &fw::FactorContribution::share) + r.specific.variance / total, 1.0, 1e-12);
  EXPECT_NEAR(r.systematic_share, r.systematic.variance / total, 1e-15);
  EXPECT_NEAR(r.specific_volatility_contribution, r.specific.variance / sigma, 1e-15 * sigma);
  for (const auto& a : r.by_asset) {
    EXPECT_NEAR(a.volatility, a.weight * a.marginal, 1e-14 * sigma) << a.asset;
    EXPECT_NEAR(a.variance, a.systematic_variance + a.specific_variance, 1e-15 * total) << a.asset;
  }
  for (Eigen::Index j = 0; j < r.exposures.size(); ++j) {
    EXPECT_EQ(r.by_factor[std::size_t(j)].factor, j);
    EXPECT_EQ(r.by_factor[std::size_t(j)].exposure, r.exposures[j]);
  }
}

TEST(PortfolioRisk, PartsAddUpToTheWholeOrthogonalModel) {
  const fw::RiskModel model(invented_fit(60, 4, 11), 252);
  const fw::PortfolioRisk r = fw::portfolio_risk(model, random_holdings(model, 35, 12));
  ASSERT_EQ(r.by_asset.size(), 35u);
  ASSERT_EQ(r.by_factor.size(), 4u);
  expect_parts_add_up(r);
}

TEST(PortfolioRisk, PartsAddUpToTheWholeObliqueModel) {
  // With correlated factors a factor's variance x_j (Phi x)_j can be negative; the parts
  // still add up.
  const fw::RiskModel model(invented_fit(60, 4, 21, oblique_correlation(4, 22)), 252);
  const fw::PortfolioRisk r = fw::portfolio_risk(model, random_holdings(model, 35, 23));
  expect_parts_add_up(r);
}

// A single holding's variance is the model's variance of that asset: Sigma_ii =
// L_i Phi L_i' + psi_i, times w^2 (common practice).
TEST(PortfolioRisk, OneAssetHasItsModelledVariance) {
  const fw::RiskModel model(invented_fit(20, 3, 31, oblique_correlation(3, 32)), 252);
  for (int i : {0, 7, 19}) {
    const Eigen::RowVectorXd l = model.loadings().row(i);
    const double sigma_ii = (l * model.factor_covariance() * l.transpose())(0, 0) + model.specific_variance()[i];
    for (double w : {1.0, 0.3, -2.5}) {
      const fw::PortfolioRisk r = fw::portfolio_risk(model, {{asset_name(i), w}});
      EXPECT_NEAR(r.total.variance, w * w * sigma_ii, 1e-14 * w * w * sigma_ii) << i << " " << w;
      EXPECT_NEAR(r.specific.variance, w * w * model.specific_variance()[i], 1e-15 * w * w * sigma_ii);
      ASSERT_EQ(r.by_asset.size(), 1u);
      EXPECT_NEAR(r.by_asset[0].volatility, r.total.volatility, 1e-14 * r.total.volatility);
      EXPECT_NEAR(r.by_asset[0].share, 1.0, 1e-14);
      // d sigma / d w = w Sigma_ii / (|w| sqrt(Sigma_ii)) = sign(w) sqrt(Sigma_ii).
      EXPECT_NEAR(r.by_asset[0].marginal, std::copysign(std::sqrt(sigma_ii), w), 1e-14 * std::sqrt(sigma_ii));
    }
  }
}

// ---------------------------------------------------------------------------------------
// Against the dense formula: Sigma = L Phi L' + Psi formed explicitly (common practice).
// A 40 x 40 matrix-vector product rounds to about 40 ulps at most: 1e-12 relative.
TEST(PortfolioRisk, MatchesTheDenseFormula) {
  for (const bool oblique : {false, true}) {
    const fw::RiskModel model(invented_fit(40, 3, 41, oblique ? oblique_correlation(3, 42) : Eigen::MatrixXd()), 252);
    const fw::Holdings h = random_holdings(model, 40, 43);
    const fw::PortfolioRisk r = fw::portfolio_risk(model, h);
    const Eigen::MatrixXd S = dense_sigma(model);
    const Eigen::VectorXd w = dense_weights(model, h);
    const Eigen::MatrixXd LPL = model.loadings() * model.factor_covariance() * model.loadings().transpose();
    const double total = w.dot(S * w), sigma = std::sqrt(total);
    EXPECT_NEAR(r.total.variance, total, 1e-12 * total) << "oblique " << oblique;
    EXPECT_NEAR(r.systematic.variance, w.dot(LPL * w), 1e-12 * total);
    EXPECT_NEAR(r.specific.variance, w.dot(model.specific_variance().cwiseProduct(w)), 1e-12 * total);
    const Eigen::VectorXd x = model.loadings().transpose() * w;
    EXPECT_LT((r.exposures - x).cwiseAbs().maxCoeff(), 1e-12 * x.cwiseAbs().maxCoeff());
    const Eigen::VectorXd Sw = S * w, common = LPL * w;
    const double largest_marginal = (Sw / sigma).cwiseAbs().maxCoeff();
    for (const auto& a : r.by_asset) {
      const Eigen::Index i = model.row_of(a.asset);
      EXPECT_NEAR(a.marginal, Sw[i] / sigma, 1e-12 * largest_marginal) << a.asset;
      EXPECT_NEAR(a.systematic_variance, w[i] * common[i], 1e-12 * total) << a.asset;
      EXPECT_NEAR(a.variance, w[i] * Sw[i], 1e-12 * total) << a.asset;
    }
  }
}

// ---------------------------------------------------------------------------------------
// Change of factor basis: L -> L T, Phi -> T^-1 Phi T^-T leaves L Phi L' unchanged, so
// every figure but the per-factor split is unchanged, and the exposures become
// (L T)' w = T' x. Rotation and alignment are such changes (rotation.h); 1e-12 relative
// covers the rounding of forming T^-1 for a well-conditioned T.

void expect_same_risk(const fw::PortfolioRisk& a, const fw::PortfolioRisk& b) {
  const double total = a.total.variance, sigma = a.total.volatility;
  EXPECT_NEAR(b.total.variance, total, 1e-12 * total);
  EXPECT_NEAR(b.systematic.variance, a.systematic.variance, 1e-12 * total);
  EXPECT_NEAR(b.specific.variance, a.specific.variance, 1e-12 * total);
  ASSERT_EQ(a.by_asset.size(), b.by_asset.size());
  for (std::size_t i = 0; i < a.by_asset.size(); ++i) {
    EXPECT_EQ(b.by_asset[i].asset, a.by_asset[i].asset);
    EXPECT_NEAR(b.by_asset[i].variance, a.by_asset[i].variance, 1e-12 * total) << a.by_asset[i].asset;
    EXPECT_NEAR(b.by_asset[i].systematic_variance, a.by_asset[i].systematic_variance, 1e-12 * total);
    EXPECT_NEAR(b.by_asset[i].volatility, a.by_asset[i].volatility, 1e-12 * sigma);
    EXPECT_NEAR(b.by_asset[i].marginal, a.by_asset[i].marginal, 1e-12 * sigma / std::abs(a.by_asset[i].weight));
  }
}

Eigen::MatrixXd random_orthogonal(int k, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal;
  Eigen::MatrixXd A(k, k);
  for (int i = 0; i < k; ++i)
    for (int j = 0; j < k; ++j) A(i, j) = normal(rng);
  return Eigen::HouseholderQR<Eigen::MatrixXd>(A).householderQ() * Eigen::MatrixXd::Identity(k, k);
}

// Invertible and far from orthogonal, with a known condition number: Q1 D Q2 with
// singular values D spread from 0.5 to 3 (condition number 6).
Eigen::MatrixXd random_oblique(int k, unsigned seed) {
  const Eigen::VectorXd d = Eigen::VectorXd::LinSpaced(k, 3.0, 0.5);
  return random_orthogonal(k, seed) * d.asDiagonal() * random_orthogonal(k, seed + 1);
}

TEST(PortfolioRisk, UnchangedByAChangeOfFactorBasis) {
  const int k = 4;
  const Eigen::MatrixXd orthogonal = random_orthogonal(k, 51);
  const Eigen::MatrixXd oblique = random_oblique(k, 52);
  const Eigen::VectorXd sv = Eigen::JacobiSVD<Eigen::MatrixXd>(oblique).singularValues();
  ASSERT_NEAR(sv[0] / sv[k - 1], 6.0, 1e-12);  // well conditioned: the 1e-12 tolerance stands
  ASSERT_FALSE((oblique.transpose() * oblique).isIdentity(0.1));
  // From an orthogonal model and from an oblique one (a promax-like Phi).
  for (const bool start_oblique : {false, true}) {
    const fw::FactorFit base = invented_fit(50, k, 53, start_oblique ? oblique_correlation(k, 54) : Eigen::MatrixXd());
    const fw::RiskModel model(base, 252);
    const fw::Holdings h = random_holdings(model, 30, 55);
    const fw::PortfolioRisk before = fw::portfolio_risk(model, h);
    for (const Eigen::MatrixXd& T : {orthogonal, oblique}) {
      fw::FactorFit turned = base;
      fw::change_factor_basis(turned, T);  // L T, T^-1 Phi T^-T (engine/factor_basis.h)
      const fw::PortfolioRisk after = fw::portfolio_risk(fw::RiskModel(turned, 252), h);
      expect_same_risk(before, after);
      const Eigen::VectorXd expected = T.transpose() * before.exposures;
      EXPECT_LT((after.exposures - expected).cwiseAbs().maxCoeff(), 1e-12 * expected.cwiseAbs().maxCoeff());
      // The per-factor split changes, but still adds up to the systematic part.
      expect_parts_add_up(after);
    }
  }
}

// Flipping the sign of a factor (column j of L, row and column j of Phi) flips its
// exposure and nothing else: x_j (Phi x)_j keeps its sign.
TEST(PortfolioRisk, FactorSignFlipFlipsOnlyThatExposure) {
  const fw::FactorFit base = invented_fit(30, 3, 61, oblique_correlation(3, 62));
  fw::FactorFit flipped = base;
  flipped.loadings.col(1) *= -1;
  flipped.factor_covariance.row(1) *= -1;
  flipped.factor_covariance.col(1) *= -1;
  const fw::RiskModel a(base, 252), b(flipped, 252);
  const fw::Holdings h = random_holdings(a, 20, 63);
  const fw::PortfolioRisk ra = fw::portfolio_risk(a, h), rb = fw::portfolio_risk(b, h);
  expect_same_risk(ra, rb);
  EXPECT_EQ(rb.exposures[0], ra.exposures[0]);
  EXPECT_EQ(rb.exposures[1], -ra.exposures[1]);
  EXPECT_EQ(rb.exposures[2], ra.exposures[2]);
  for (std::size_t j = 0; j < 3; ++j)
    EXPECT_NEAR(rb.by_factor[j].variance, ra.by_factor[j].variance, 1e-14 * ra.total.variance) << j;
}

// ---------------------------------------------------------------------------------------
// Holdings the model does not cover.

fw::FactorFit fit_with_exclusions() {
  fw::FactorFit f = invented_fit(20, 2, 71);
  f.excluded = {{"X1", "coverage 0.41 below minimum 0.80"}, {"X2", "constant series"}};
  return f;
}

TEST(PortfolioRisk, NotModelledHoldingsAreListedAndCarryNoRisk) {
  const fw::RiskModel model(fit_with_exclusions(), 252);
  const fw::Holdings h = {{"A003", 0.30}, {"X1", 0.20}, {"A010", -0.10}, {"ZZZ", -0.05}, {"A007", 0.25}, {"X2", 0.0}};
  const fw::PortfolioRisk r = fw::portfolio_risk(model, h);

  ASSERT_EQ(r.not_modelled.size(), 3u);  // in input order, with weight and reason
  EXPECT_EQ(r.not_modelled[0].asset, "X1");
  EXPECT_EQ(r.not_modelled[0].weight, 0.20);
  EXPECT_EQ(r.not_modelled[0].reason, "coverage 0.41 below minimum 0.80");  // the fit's own reason
  EXPECT_EQ(r.not_modelled[1].asset, "ZZZ");
  EXPECT_EQ(r.not_modelled[1].weight, -0.05);
  EXPECT_EQ(r.not_modelled[1].reason, "no returns in the window");
  EXPECT_EQ(r.not_modelled[2].asset, "X2");
  EXPECT_EQ(r.not_modelled[2].weight, 0.0);
  EXPECT_EQ(r.not_modelled[2].reason, "constant series");
  ASSERT_EQ(r.by_asset.size(), 3u);
  EXPECT_EQ(r.by_asset[0].asset, "A003");
  EXPECT_EQ(r.by_asset[1].asset, "A010");
  EXPECT_EQ(r.by_asset[2].asset, "A007");

  // They contribute nothing: the same numbers as the modelled holdings alone.
  const fw::PortfolioRisk alone = fw::portfolio_risk(model, {{"A003", 0.30}, {"A010", -0.10}, {"A007", 0.25}});
  EXPECT_EQ(r.total.variance, alone.total.variance);
  EXPECT_EQ(r.systematic.variance, alone.systematic.variance);
  for (std::size_t i = 0; i < 3; ++i) EXPECT_EQ(r.by_asset[i].volatility, alone.by_asset[i].volatility);

  // Weight sums over all six holdings and over the three modelled ones (by hand).
  const fw::WeightSummary& s = r.weights;
  EXPECT_EQ(s.holdings, 6u);
  EXPECT_EQ(s.modelled, 3u);
  EXPECT_NEAR(s.net, 0.30 + 0.20 - 0.10 - 0.05 + 0.25, 1e-15);
  EXPECT_NEAR(s.gross, 0.30 + 0.20 + 0.10 + 0.05 + 0.25, 1e-15);
  EXPECT_NEAR(s.long_weight, 0.75, 1e-15);
  EXPECT_NEAR(s.short_weight, -0.15, 1e-15);
  EXPECT_NEAR(s.modelled_net, 0.45, 1e-15);
  EXPECT_NEAR(s.modelled_gross, 0.65, 1e-15);
  EXPECT_NEAR(s.not_modelled_gross, 0.25, 1e-15);

  EXPECT_EQ(model.reason_not_modelled("X1"), "coverage 0.41 below minimum 0.80");
  EXPECT_EQ(model.reason_not_modelled("ZZZ"), "no returns in the window");
  EXPECT_EQ(model.row_of("X1"), -1);
  EXPECT_EQ(model.row_of("A010"), 10);
}

// The message of the std::invalid_argument `call` throws ("" when it does not throw).
template <typename Call>
std::string invalid_argument_message(Call call) {
  try {
    call();
  } catch (const std::invalid_argument& e) {
    return e.what();
  }
  return "";
}

TEST(PortfolioRisk, RejectsRepeatedAssetsAndNonFiniteWeights) {
  const fw::RiskModel model(fit_with_exclusions(), 252);
  const double nan = std::numeric_limits<double>::quiet_NaN(), inf = std::numeric_limits<double>::infinity();
  const std::vector<std::pair<fw::Holdings, std::string>> cases = {
      {{{"A001", 0.1}, {"A002", 0.2}, {"A001", 0.3}}, "A001"},  // a modelled asset twice
      {{{"ZZZ", 0.1}, {"A002", 0.2}, {"ZZZ", 0.1}}, "ZZZ"},     // an unmodelled one twice
      {{{"A001", 0.1}, {"A004", nan}}, "A004"},
      {{{"A001", 0.1}, {"X1", -inf}}, "X1"},
  };
  for (const auto& [holdings, asset] : cases) {
    const auto& weights = holdings;  // a lambda may not capture a structured binding before C++20
    const std::string message = invalid_argument_message([&] { fw::portfolio_risk(model, weights); });
    EXPECT_NE(message.find("'" + asset + "'"), std::string::npos) << "no error naming " << asset << ": " << message;
  }
}

// Nothing at risk: Euler contributions are 0 and shares undefined (quiet NaN).
TEST(PortfolioRisk, NothingAtRiskGivesZeroContributionsAndUndefinedShares) {
  const fw::RiskModel model(fit_with_exclusions(), 252);
  const std::vector<fw::Holdings> cases = {{}, {{"X1", 0.5}, {"ZZZ", 0.5}}, {{"A001", 0.0}, {"A002", 0.0}}};
  for (const fw::Holdings& h : cases) {
    const fw::PortfolioRisk r = fw::portfolio_risk(model, h);
    EXPECT_EQ(r.total.variance, 0.0);
    EXPECT_EQ(r.total.volatility, 0.0);
    EXPECT_EQ(r.total.annualised_volatility, 0.0);
    EXPECT_TRUE(std::isnan(r.systematic_share));
    EXPECT_EQ(r.specific_volatility_contribution, 0.0);
    ASSERT_EQ(r.exposures.size(), 2);
    EXPECT_EQ(r.exposures.cwiseAbs().maxCoeff(), 0.0);
    ASSERT_EQ(r.by_factor.size(), 2u);
    for (const auto& f : r.by_factor) {
      EXPECT_EQ(f.volatility, 0.0);
      EXPECT_TRUE(std::isnan(f.share));
    }
    for (const auto& a : r.by_asset) {
      EXPECT_EQ(a.marginal, 0.0);
      EXPECT_EQ(a.volatility, 0.0);
      EXPECT_TRUE(std::isnan(a.share));
    }
  }
}

// ---------------------------------------------------------------------------------------
// Active weights and trades.

TEST(ActiveWeights, UnionInPortfolioOrderThenBenchmarkDifferences) {
  const fw::Holdings p = {{"A", 0.5}, {"B", 0.3}, {"C", 0.2}};
  const fw::Holdings b = {{"C", 0.25}, {"D", 0.25}, {"A", 0.5}};
  const fw::Holdings a = fw::active_weights(p, b);
  ASSERT_EQ(a.size(), 4u);
  EXPECT_EQ(a[0].asset, "A");
  EXPECT_EQ(a[0].weight, 0.0);
  EXPECT_EQ(a[1].asset, "B");
  EXPECT_EQ(a[1].weight, 0.3);
  EXPECT_EQ(a[2].asset, "C");
  EXPECT_EQ(a[2].weight, 0.2 - 0.25);
  EXPECT_EQ(a[3].asset, "D");
  EXPECT_EQ(a[3].weight, -0.25);
  EXPECT_THROW(fw::active_weights({{"A", 1}, {"A", 2}}, b), std::invalid_argument);
  EXPECT_THROW(fw::active_weights(p, {{"D", 1}, {"D", 2}}), std::invalid_argument);
}

TEST(ApplyTrade, AddsAppendsNewAssetsAndKeepsZeros) {
  const fw::Holdings p = {{"A", 0.5}, {"B", 0.3}};
  const fw::Holdings t = fw::apply_trade(p, {{"B", -0.3}, {"E", 0.1}, {"A", 0.1}, {"E", 0.05}});
  ASSERT_EQ(t.size(), 3u);
  EXPECT_EQ(t[0].asset, "A");
  EXPECT_EQ(t[0].weight, 0.5 + 0.1);
  EXPECT_EQ(t[1].asset, "B");
  EXPECT_EQ(t[1].weight, 0.0);  // sold out: stays, at zero
  EXPECT_EQ(t[2].asset, "E");
  EXPECT_EQ(t[2].weight, 0.1 + 0.05);  // both changes apply, appended once
  EXPECT_EQ(fw::apply_trade(p, {}).size(), 2u);
  EXPECT_THROW(fw::apply_trade({{"A", 1}, {"A", 2}}, {}), std::invalid_argument);
}

// Active risk (tracking error) is the risk of w - b: (w - b)' Sigma (w - b) formed densely.
TEST(ActiveWeights, ActiveRiskIsTheRiskOfTheDifference) {
  const fw::RiskModel model(fit_with_exclusions(), 252);
  fw::Holdings p = random_holdings(model, 12, 81), b = random_holdings(model, 15, 82);
  p.push_back({"ZZZ", 0.1});  // unmodelled on either side: listed, no risk
  b.push_back({"X1", 0.2});
  const fw::PortfolioRisk r = fw::portfolio_risk(model, fw::active_weights(p, b));
  const Eigen::VectorXd d = dense_weights(model, p) - dense_weights(model, b);
  const double expected = d.dot(dense_sigma(model) * d);
  EXPECT_NEAR(r.total.variance, expected, 1e-12 * expected);
  ASSERT_EQ(r.not_modelled.size(), 2u);
  EXPECT_EQ(r.not_modelled[0].weight, 0.1);
  EXPECT_EQ(r.not_modelled[1].weight, -0.2);

  // Against itself: every active weight is exactly 0, and so is the tracking error.
  const fw::PortfolioRisk same = fw::portfolio_risk(model, fw::active_weights(p, p));
  EXPECT_EQ(same.total.variance, 0.0);
  EXPECT_EQ(same.total.volatility, 0.0);
  EXPECT_EQ(same.weights.gross, 0.0);
}

// ---------------------------------------------------------------------------------------
// Annualising by the square root of time (common practice): variance x periods per year,
// volatility x sqrt(periods per year); 252 trading days, 52 weeks, 12 months.
TEST(PortfolioRisk, AnnualisesBySquareRootOfTime) {
  const fw::FactorFit f = invented_fit(25, 2, 91);
  fw::PortfolioRisk daily;
  for (int ppy : {252, 52, 12}) {
    const fw::RiskModel model(f, ppy);
    const fw::PortfolioRisk r = fw::portfolio_risk(model, random_holdings(model, 10, 92));
    EXPECT_EQ(r.periods_per_year, ppy);
    for (const fw::RiskFigure* x : {&r.total, &r.systematic, &r.specific}) {
      EXPECT_NEAR(x->annualised_variance, x->variance * ppy, 1e-15 * x->variance * ppy);
      EXPECT_NEAR(x->annualised_volatility, x->volatility * std::sqrt(double(ppy)), 1e-15 * x->annualised_volatility);
      EXPECT_NEAR(x->volatility, std::sqrt(x->variance), 1e-15 * x->volatility);
    }
    if (ppy == 252)
      daily = r;
    else
      EXPECT_EQ(r.total.variance, daily.total.variance);  // per period: unaffected
  }
}

// ---------------------------------------------------------------------------------------
// Building the model.

TEST(RiskModel, CopiesTheFitAndChecksItsShapes) {
  const fw::FactorFit f = fit_with_exclusions();
  const fw::RiskModel m(f, 52);
  EXPECT_EQ(m.assets(), f.assets);
  EXPECT_EQ(m.loadings(), f.loadings);
  EXPECT_EQ(m.specific_variance(), f.specific_variance);
  EXPECT_EQ(m.factor_covariance(), Eigen::MatrixXd::Identity(2, 2));  // empty in the fit: orthogonal
  EXPECT_EQ(m.periods_per_year(), 52);
  EXPECT_EQ(m.factors(), 2);

  const fw::RiskModel empty;  // a default model covers nothing
  const fw::PortfolioRisk r = fw::portfolio_risk(empty, {{"A", 1.0}});
  EXPECT_EQ(r.not_modelled.size(), 1u);
  EXPECT_EQ(r.total.variance, 0.0);

  EXPECT_THROW(fw::RiskModel(f, 0), std::invalid_argument);
  fw::FactorFit bad = f;
  bad.loadings.conservativeResize(19, 2);
  EXPECT_THROW(fw::RiskModel(bad, 252), std::invalid_argument);
  bad = f;
  bad.specific_variance.conservativeResize(21);
  EXPECT_THROW(fw::RiskModel(bad, 252), std::invalid_argument);
  bad = f;
  bad.factor_covariance = Eigen::MatrixXd::Identity(3, 3);
  EXPECT_THROW(fw::RiskModel(bad, 252), std::invalid_argument);
  bad = f;
  bad.assets[5] = bad.assets[4];
  EXPECT_THROW(fw::RiskModel(bad, 252), std::invalid_argument);
  bad = f;
  bad.specific_variance[3] = std::numeric_limits<double>::quiet_NaN();
  EXPECT_THROW(fw::RiskModel(bad, 252), std::invalid_argument);
}

// ---------------------------------------------------------------------------------------
// Planted structure (invented data, tests/simulated_model.h): returns drawn from a known
// orthogonal model x_t = mu + L f_t + e_t, f ~ N(0, I), e ~ N(0, Psi), N = 30, k = 3,
// T = 200,000 (fixed seed). By the law of large numbers sample moments approach the
// model's; the bounds are 5 standard errors of the sample statistic (central limit
// theorem; common practice). A standard normal exceeds 5 with probability 5.7e-7, so even
// over the ~100 checks below a correct model fails with probability below 1e-4 for a
// random seed; the seed is fixed, so the test is deterministic.
//   - sample covariance of zero-mean jointly normal X, Y: standard error
//     sqrt((Var X Var Y + Cov(X, Y)^2) / T);
//   - sample variance of a normal variable with variance s^2: standard error s^2 sqrt(2/T).

class PlantedRisk : public ::testing::Test {
 protected:
  static constexpr int T = 200000, N = 30, k = 3;
  static void SetUpTestSuite() {
    planted_ = new factorwatch::testing::PlantedModel(factorwatch::testing::simulate_planted_model(T, N, k, 20261202));
  }
  static void TearDownTestSuite() {
    delete planted_;
    planted_ = nullptr;
  }
  // The true model, as a fit.
  static fw::RiskModel true_model() {
    fw::FactorFit f;
    f.assets = planted_->panel.assets;
    f.loadings = planted_->loadings;
    f.specific_variance = planted_->specific_variance;
    return fw::RiskModel(f, 252);
  }
  static double sample_variance(const Eigen::VectorXd& x) {
    return (x.array() - x.mean()).square().mean();
  }
  static double sample_covariance(const Eigen::VectorXd& x, const Eigen::VectorXd& y) {
    return ((x.array() - x.mean()) * (y.array() - y.mean())).mean();
  }
  static factorwatch::testing::PlantedModel* planted_;
};
factorwatch::testing::PlantedModel* PlantedRisk::planted_ = nullptr;

// (i) The draws carry the planted loadings: cov(x_i, f_j) = L_ij.
TEST_F(PlantedRisk, ReturnsCovaryWithTheFactorsAsTheLoadingsSay) {
  const auto& m = *planted_;
  const Eigen::MatrixXd X = m.panel.values;
  double worst = 0;
  for (int i = 0; i < N; ++i) {
    const double var_i = m.loadings.row(i).squaredNorm() + m.specific_variance[i];  // Sigma_ii
    for (int j = 0; j < k; ++j) {
      const double c = sample_covariance(X.col(i), m.factors.col(j));
      const double se = std::sqrt((var_i * 1.0 + m.loadings(i, j) * m.loadings(i, j)) / T);
      worst = std::max(worst, std::abs(c - m.loadings(i, j)) / se);
      EXPECT_LT(std::abs(c - m.loadings(i, j)), 5 * se) << i << "," << j;
    }
  }
  std::cout << "cov(x, f) against L: largest error " << worst << " standard errors\n";
}

// (ii) and (iii): realised variances of portfolio returns, of their systematic part w'L f_t
// and of their specific part w'e_t against the model's total, systematic and specific
// variance; realised covariances of each weighted asset with the portfolio against the
// Euler variance contributions w_i (Sigma w)_i.
TEST_F(PlantedRisk, RealisedVariancesApproachTheModelsSplit) {
  const auto& m = *planted_;
  const fw::RiskModel model = true_model();
  const Eigen::MatrixXd X = m.panel.values;
  const Eigen::MatrixXd E = (X.rowwise() - m.mean.transpose()) - m.factors * m.loadings.transpose();  // e_t
  const double se_factor = std::sqrt(2.0 / T);

  std::vector<Eigen::VectorXd> portfolios;
  portfolios.push_back(Eigen::VectorXd::Constant(N, 1.0 / N));  // equal weight
  Eigen::VectorXd long_short = Eigen::VectorXd::Zero(N);
  for (int i = 0; i < N; ++i) long_short[i] = (i % 2 == 0 ? 1.0 : -1.0) / N;  // near factor-neutral
  portfolios.push_back(long_short);
  Eigen::VectorXd concentrated = Eigen::VectorXd::Zero(N);
  concentrated[3] = 0.6;
  concentrated[17] = 0.5;
  concentrated[25] = -0.1;
  portfolios.push_back(concentrated);

  double worst = 0;
  for (std::size_t p = 0; p < portfolios.size(); ++p) {
    const Eigen::VectorXd& w = portfolios[p];
    fw::Holdings h;
    for (int i = 0; i < N; ++i)
      if (w[i] != 0) h.push_back({m.panel.assets[std::size_t(i)], w[i]});
    const fw::PortfolioRisk r = fw::portfolio_risk(model, h);

    const Eigen::VectorXd total = X * w, systematic = m.factors * (m.loadings.transpose() * w), specific = E * w;
    const std::pair<double, double> parts[] = {{sample_variance(total), r.total.variance},
                                               {sample_variance(systematic), r.systematic.variance},
                                               {sample_variance(specific), r.specific.variance}};
    for (const auto& [realised, modelled] : parts) {
      const double se = modelled * se_factor;
      worst = std::max(worst, std::abs(realised - modelled) / se);
      EXPECT_LT(std::abs(realised - modelled), 5 * se) << "portfolio " << p;
    }
    // The two parts are uncorrelated: their sample covariance is within 5 standard errors of 0.
    const double cross = sample_covariance(systematic, specific);
    EXPECT_LT(std::abs(cross), 5 * std::sqrt(r.systematic.variance * r.specific.variance / T)) << "portfolio " << p;

    // Euler contributions: cov(w_i x_i, w'x) = w_i (Sigma w)_i.
    for (const auto& a : r.by_asset) {
      const Eigen::Index i = model.row_of(a.asset);
      const Eigen::VectorXd held = a.weight * X.col(i);
      const double c = sample_covariance(held, total);
      const double var_held = a.weight * a.weight * (m.loadings.row(i).squaredNorm() + m.specific_variance[i]);
      const double se = std::sqrt((var_held * r.total.variance + a.variance * a.variance) / T);
      worst = std::max(worst, std::abs(c - a.variance) / se);
      EXPECT_LT(std::abs(c - a.variance), 5 * se) << "portfolio " << p << " " << a.asset;
    }
  }
  std::cout << "realised against modelled variances: largest error " << worst << " standard errors\n";
}

}  // namespace
