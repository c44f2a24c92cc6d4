// Portfolio risk against R and numpy on a published dataset.
//
// Source: daily log returns of the DAX, SMI, CAC and FTSE closing prices, 1991-1998, R's
// datasets::EuStockMarkets (tests/reference/eustock_returns.csv). Reference values: R 4.2.2
// stats::factanal(r, factors = 1, rotation = "none", tight control) put on the covariance
// scale with standard deviations dividing by n (our engine's convention), and the risk of
// two portfolios in that model — tests/reference/make_eustock_risk.R, eustock_risk_r.csv —
// recomputed densely with numpy 1.24.2 by make_eustock_risk.py (eustock_risk_numpy.csv).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <iostream>
#include <map>
#include <tuple>

#include "factorwatch/engine/fit.h"
#include "factorwatch/engine/risk.h"
#include "eustock_returns.h"
#include "reference_table.h"

namespace {

namespace fw = factorwatch::engine;
using factorwatch::testing::read_reference;
using factorwatch::testing::ReferenceTable;

const std::vector<std::string> kAssets = {"DAX", "SMI", "CAC", "FTSE"};
const std::vector<std::string> kPortfolios = {"equal", "long_short"};

// (block, portfolio, item, quantity) -> value, from the long-format reference files.
using Key = std::tuple<std::string, std::string, std::string, std::string>;
using Figures = std::map<Key, double>;

Figures figures_from(const std::string& file) {
  const ReferenceTable t = read_reference(file);
  Figures out;
  for (std::size_t r = 0; r < t.rows.size(); ++r)
    out[{t.text(r, "block"), t.text(r, "portfolio"), t.text(r, "item"), t.text(r, "quantity")}] =
        t.number(r, "value");
  return out;
}

double at(const Figures& f, const std::string& block, const std::string& portfolio, const std::string& item,
          const std::string& quantity) {
  const auto it = f.find({block, portfolio, item, quantity});
  if (it == f.end()) throw std::runtime_error("reference has no " + block + "/" + portfolio + "/" + item + "/" + quantity);
  return it->second;
}

fw::ReturnsPanel eustock() { return factorwatch::testing::eustock_returns(); }

// R's model as a fit: the covariance-scale loadings and specific variances of the file.
fw::FactorFit fit_from(const Figures& f) {
  fw::FactorFit fit;
  fit.assets = kAssets;
  fit.factors = 1;
  fit.loadings.resize(4, 1);
  fit.specific_variance.resize(4);
  for (int i = 0; i < 4; ++i) {
    fit.loadings(i, 0) = at(f, "model", "-", kAssets[std::size_t(i)], "loading");
    fit.specific_variance[i] = at(f, "model", "-", kAssets[std::size_t(i)], "specific_variance");
  }
  return fit;  // factor covariance left empty: the orthogonal model's identity
}

fw::Holdings holdings_of(const Figures& f, const std::string& portfolio) {
  fw::Holdings h;
  for (const std::string& a : kAssets) h.push_back({a, at(f, "weights", portfolio, a, "weight")});
  return h;
}

// Every figure the reference files hold, as portfolio_risk reports it; the exposure (and
// so the factor's signed figures) up to the loading's sign when `up_to_sign`.
struct Comparison {
  double worst = 0;  // largest relative difference seen
  std::string where;
};

// Compares |ours - reference| relative to the largest |reference| of the same block and
// quantity across both portfolios and all assets (a long-short asset's contribution can be
// near zero while its siblings are not).
Comparison compare(const fw::RiskModel& model, const Figures& ref, bool up_to_sign) {
  std::map<std::pair<std::string, std::string>, double> scale;
  for (const auto& [key, value] : ref) {
    double& s = scale[{std::get<0>(key), std::get<3>(key)}];
    s = std::max(s, std::abs(value));
  }
  Comparison c;
  auto check = [&](double ours, const std::string& block, const std::string& portfolio, const std::string& item,
                   const std::string& quantity) {
    double theirs = at(ref, block, portfolio, item, quantity);
    if (up_to_sign && std::signbit(ours) != std::signbit(theirs)) theirs = -theirs;
    const double d = std::abs(ours - theirs) / scale.at({block, quantity});
    if (d > c.worst) c = {d, block + "/" + portfolio + "/" + item + "/" + quantity};
  };
  for (const std::string& p : kPortfolios) {
    const fw::PortfolioRisk r = fw::portfolio_risk(model, holdings_of(ref, p));
    EXPECT_EQ(r.by_asset.size(), 4u);
    EXPECT_TRUE(r.not_modelled.empty());
    check(r.systematic.variance, "portfolio", p, "-", "systematic_variance");
    check(r.specific.variance, "portfolio", p, "-", "specific_variance");
    check(r.total.variance, "portfolio", p, "-", "total_variance");
    check(r.total.volatility, "portfolio", p, "-", "volatility");
    check(r.systematic_share, "portfolio", p, "-", "systematic_share");
    check(r.specific_volatility_contribution, "portfolio", p, "-", "specific_volatility_contribution");
    check(r.by_factor.at(0).exposure, "factor", p, "f1", "exposure");
    check(r.exposures[0], "factor", p, "f1", "exposure");
    check(r.by_factor[0].variance, "factor", p, "f1", "variance");
    check(r.by_factor[0].volatility, "factor", p, "f1", "volatility");
    check(r.by_factor[0].share, "factor", p, "f1", "share");
    for (const fw::AssetContribution& a : r.by_asset) {
      check(a.weight, "weights", p, a.asset, "weight");
      check(a.systematic_variance, "asset", p, a.asset, "systematic_variance");
      check(a.specific_variance, "asset", p, a.asset, "specific_variance");
      check(a.variance, "asset", p, a.asset, "variance");
      check(a.marginal, "asset", p, a.asset, "marginal");
      check(a.volatility, "asset", p, a.asset, "volatility");
      check(a.share, "asset", p, a.asset, "share");
    }
  }
  return c;
}

// (1) The formula alone: R's loadings and uniquenesses in, every figure out to 1e-12
// relative. Both sides evaluate the same short sums (4 assets, 1 factor) in double
// precision: rounding is a few ulps (numpy and R agree to 3.2e-15, file header).
// Reference: R 4.2.2 stats::factanal on datasets::EuStockMarkets, tests/reference/make_eustock_risk.R.
TEST(EuStockRisk, FiguresFromRsModelMatchR) {
  const Figures ref = figures_from("eustock_risk_r.csv");
  const fw::RiskModel model(fit_from(ref), 252);
  const Comparison c = compare(model, ref, false);
  EXPECT_LT(c.worst, 1e-12) << c.where;
  std::cout << "engine vs R on R's model: largest relative difference " << c.worst << " (" << c.where << ")\n";
}

// Reference: numpy 1.24.2, Sigma = L L' + diag(psi) formed densely from R's model,
// tests/reference/make_eustock_risk.py. Same tolerance and reason as above.
TEST(EuStockRisk, FiguresFromRsModelMatchNumpy) {
  const Figures ref = figures_from("eustock_risk_numpy.csv");
  const fw::RiskModel model(fit_from(figures_from("eustock_risk_r.csv")), 252);
  const Comparison c = compare(model, ref, false);
  EXPECT_LT(c.worst, 1e-12) << c.where;
  std::cout << "engine vs numpy on R's model: largest relative difference " << c.worst << " (" << c.where << ")\n";
}

// (2) Our own maximum-likelihood fit of the same returns against R's. factanal fits the
// correlation matrix and our covariance-basis ML is scale-equivariant, so both are the
// same model once R's is put on the covariance scale with the n-denominator standard
// deviations (done in the R script).
// Reference: R 4.2.2 stats::factanal on datasets::EuStockMarkets, tests/reference/make_eustock_risk.R.
TEST(EuStockRisk, OurMaximumLikelihoodFitGivesRsRisk) {
  fw::FitOptions o;
  o.method = fw::Method::max_likelihood;
  o.factors = 1;
  o.basis = fw::Basis::covariance;
  o.tolerance = 1e-14;  // far past factanal's own accuracy (below)
  o.max_iterations = 200000;
  const fw::FactorFit f = fw::fit(eustock(), o);
  ASSERT_TRUE(f.converged) << f.BriefReport();
  ASSERT_EQ(f.assets, kAssets);

  const Figures ref = figures_from("eustock_risk_r.csv");
  double uniqueness_gap = 0;
  for (int i = 0; i < 4; ++i)
    uniqueness_gap = std::max(uniqueness_gap, std::abs(f.uniqueness[i] - at(ref, "model", "-", kAssets[std::size_t(i)], "uniqueness")));
  // factanal's optimum is determined to 2.6e-9 on the uniquenesses: 50 fits from random
  // starts agree to that (its stationarity gap max |u + lambda^2 - 1| is 1.9e-10; file
  // header). Ours runs to a 1e-14 relative change of the log-likelihood. Measured gap
  // 3.0e-10; tolerance 1e-8, about 4 times R's own start-to-start spread.
  EXPECT_LT(uniqueness_gap, 1e-8);

  const fw::RiskModel model(f, 252);
  const Comparison c = compare(model, ref, true);
  // The figures are smooth functions of the 8 fitted numbers; the long-short portfolio's
  // systematic part is a near-cancelling sum (share 0.14), which amplified the uniqueness
  // gap about 4.4-fold here (measured 1.3e-9 relative). Tolerance 5e-8: that amplification
  // applied to R's 2.6e-9 indeterminacy, with a further factor of 4 to spare. (R's
  // default optimiser control moves the uniquenesses by 1.5e-6: this check needs the
  // tight control the script uses.)
  EXPECT_LT(c.worst, 5e-8) << c.where;
  std::cout << "our ML fit vs factanal: uniquenesses differ by " << uniqueness_gap
            << ", risk figures by " << c.worst << " relative (" << c.where << ")\n";
}

}  // namespace
