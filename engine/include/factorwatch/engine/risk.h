// The risk of a portfolio in one window's factor model, Sigma = L Phi L' + Psi:
// total, systematic (w' L Phi L' w) and specific (w' Psi w) variance, the portfolio's
// factor exposures L'w, and Euler contributions to volatility by asset and by factor.
//
// Weights are whatever the holdings file says (fractions of capital, or amounts): risk
// scales with them, so amounts give volatility in the same currency. Holdings the window
// does not model (no returns in it, excluded for coverage) carry no risk here and are
// listed with their weight and the reason, never dropped in silence.
#pragma once

#include <Eigen/Dense>
#include <optional>
#include <string>
#include <unordered_map>
#include <vector>

#include "factorwatch/engine/failure.h"
#include "factorwatch/engine/fit.h"

namespace factorwatch::engine {

// RiskModel::reason_not_modelled for an asset the fit neither holds nor excluded.
inline constexpr const char* kNotInWindow = "no returns in the window";

struct Holding {
  std::string asset;
  double weight = 0;
};
using Holdings = std::vector<Holding>;

// One window's factors as a portfolio is measured against them (the served basis: any
// rotation and alignment changes L and Phi together and leaves every number below, except
// the per-factor split, unchanged). Built once per window and reused across queries: the
// asset index is what makes a 2,000-name query cheap on a 5,000-asset window.
class RiskModel {
 public:
  RiskModel() = default;
  // From a fit (its assets, loadings, factor covariance, specific variances and excluded
  // assets with their reasons) and the data's periods per year (frequency.h).
  RiskModel(const FactorFit& fit, int periods_per_year);

  const std::vector<std::string>& assets() const { return assets_; }
  const Eigen::MatrixXd& loadings() const { return loadings_; }                   // N x k
  const Eigen::MatrixXd& factor_covariance() const { return factor_covariance_; } // k x k
  const Eigen::VectorXd& specific_variance() const { return specific_variance_; } // N
  int periods_per_year() const { return periods_per_year_; }
  Eigen::Index factors() const { return loadings_.cols(); }
  // Row of an asset, or -1 when the window does not model it.
  Eigen::Index row_of(const std::string& asset) const;
  // Why an asset has no row: the fit's exclusion reason, else kNotInWindow.
  std::string reason_not_modelled(const std::string& asset) const;

 private:
  std::vector<std::string> assets_;
  Eigen::MatrixXd loadings_;
  Eigen::MatrixXd factor_covariance_;
  Eigen::VectorXd specific_variance_;
  int periods_per_year_ = 252;
  std::unordered_map<std::string, Eigen::Index> rows_;
  std::unordered_map<std::string, std::string> excluded_;
};

// A variance with its volatility, per period and annualised by the square root of time
// (common practice): annualised variance = variance x periods per year.
struct RiskFigure {
  double variance = 0;
  double volatility = 0;             // sqrt(variance)
  double annualised_variance = 0;
  double annualised_volatility = 0;
};

// Euler allocation of volatility sigma = sqrt(w' Sigma w): a part with variance
// contribution c contributes c / sigma to sigma, and the parts add up to sigma.
struct FactorContribution {
  Eigen::Index factor = 0;  // column of L (0-based; surfaces name it f1, f2, ...)
  double exposure = 0;      // (L'w)_j
  double variance = 0;      // (L'w)_j (Phi L'w)_j; can be negative with correlated factors
  double volatility = 0;    // variance / sigma, per period
  double share = 0;         // variance / total variance (NaN when the total is 0)
};

struct AssetContribution {
  std::string asset;
  double weight = 0;
  double systematic_variance = 0;  // w_i (L Phi L'w)_i
  double specific_variance = 0;    // w_i^2 psi_i
  double variance = 0;             // the two together: w_i (Sigma w)_i
  double marginal = 0;             // d sigma / d w_i = (Sigma w)_i / sigma (0 when sigma is 0)
  double volatility = 0;           // w_i x marginal = variance / sigma, per period
  double share = 0;                // variance / total variance (NaN when the total is 0)
};

struct NotModelled {
  std::string asset;
  double weight = 0;
  std::string reason;
};

// What the weights add up to, over all holdings and over the modelled ones.
struct WeightSummary {
  std::size_t holdings = 0;
  std::size_t modelled = 0;
  double net = 0;             // sum of weights
  double gross = 0;           // sum of absolute weights
  double long_weight = 0;     // sum of positive weights
  double short_weight = 0;    // sum of negative weights (<= 0)
  double modelled_net = 0;
  double modelled_gross = 0;
  double not_modelled_gross = 0;  // sum of absolute weights the model does not cover
};

struct PortfolioRisk {
  int periods_per_year = 252;
  RiskFigure total, systematic, specific;  // total = systematic + specific (variances)
  double systematic_share = 0;  // systematic variance / total (NaN when the total is 0)
  Eigen::VectorXd exposures;    // k, L'w
  std::vector<FactorContribution> by_factor;  // k, in factor order
  double specific_volatility_contribution = 0;  // w'Psi w / sigma
  std::vector<AssetContribution> by_asset;    // the modelled holdings, in input order
  std::vector<NotModelled> not_modelled;      // in input order
  WeightSummary weights;
};

// The first rule a set of weights breaks for portfolio_risk (an asset held twice, a weight
// that is not finite), as a rejected failure naming `field`; nullopt when it can be
// measured. Callers with weights from outside check here rather than catch the throws below.
std::optional<Failure> weights_failure(const Holdings& holdings, const std::string& field);

// Throws std::invalid_argument when an asset appears twice or a weight is not finite.
PortfolioRisk portfolio_risk(const RiskModel& model, const Holdings& holdings);

// Portfolio minus benchmark over the union of their assets (portfolio order first, then
// the benchmark's other assets): the weights whose risk is the active risk (tracking error).
// Throws std::invalid_argument when an asset appears twice in either.
Holdings active_weights(const Holdings& portfolio, const Holdings& benchmark);

// The portfolio after adding each change to its asset's weight (a new asset is appended).
// Assets whose weight becomes exactly zero stay in the list with weight 0. Several changes
// for one asset all apply; an asset twice in the portfolio throws std::invalid_argument.
Holdings apply_trade(const Holdings& portfolio, const Holdings& changes);

}  // namespace factorwatch::engine
