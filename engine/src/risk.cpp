// Portfolio risk in a factor model Sigma = L Phi L' + Psi, touching only the held rows:
// one query costs O(n k + k^2) for n holdings, never O(N k) or O(N^2).
#include "factorwatch/engine/risk.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>
#include <string_view>
#include <unordered_set>

namespace factorwatch::engine {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

using RowMajor = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

RiskFigure figure(double variance, int periods_per_year) {
  RiskFigure f;
  f.variance = variance;
  // A positive semidefinite model cannot give a negative variance; rounding of a zero one
  // can (-1e-20, say), and that is volatility 0, not NaN.
  f.volatility = std::sqrt(std::max(variance, 0.0));
  f.annualised_variance = variance * periods_per_year;
  f.annualised_volatility = f.volatility * std::sqrt(double(periods_per_year));
  return f;
}

// The first holding whose asset was held before in the list; nullptr when each is once.
const Holding* first_repeated(const Holdings& holdings) {
  std::unordered_set<std::string_view> seen;
  seen.reserve(holdings.size());
  for (const Holding& h : holdings)
    if (!seen.insert(h.asset).second) return &h;
  return nullptr;
}

[[noreturn]] void repeated(const std::string& asset, const char* what) {
  throw std::invalid_argument(std::string(what) + ": asset '" + asset + "' appears more than once");
}

// Each asset once (active_weights and apply_trade only add weights up; portfolio_risk
// rejects a non-finite result).
void check_unique(const Holdings& holdings, const char* what) {
  if (const Holding* h = first_repeated(holdings)) repeated(h->asset, what);
}

}  // namespace

RiskModel::RiskModel(const FactorFit& fit, int periods_per_year)
    : assets_(fit.assets),
      loadings_(fit.loadings),
      factor_covariance_(fit.factor_covariance),
      specific_variance_(fit.specific_variance),
      periods_per_year_(periods_per_year) {
  const auto n = Eigen::Index(assets_.size());
  const Eigen::Index k = loadings_.cols();
  if (periods_per_year < 1)
    throw std::invalid_argument("RiskModel: periods_per_year " + std::to_string(periods_per_year) +
                                " must be at least 1");
  if (loadings_.rows() != n)
    throw std::invalid_argument("RiskModel: " + std::to_string(n) + " assets but loadings with " +
                                std::to_string(loadings_.rows()) + " rows");
  if (specific_variance_.size() != n)
    throw std::invalid_argument("RiskModel: " + std::to_string(n) + " assets but " +
                                std::to_string(specific_variance_.size()) + " specific variances");
  // Orthogonal fits may leave Phi empty: it is the identity then.
  if (factor_covariance_.size() == 0) factor_covariance_ = Eigen::MatrixXd::Identity(k, k);
  if (factor_covariance_.rows() != k || factor_covariance_.cols() != k)
    throw std::invalid_argument("RiskModel: factor covariance is " + std::to_string(factor_covariance_.rows()) +
                                " x " + std::to_string(factor_covariance_.cols()) + " but there are " +
                                std::to_string(k) + " factors");
  if (!loadings_.allFinite() || !factor_covariance_.allFinite() || !specific_variance_.allFinite())
    throw std::invalid_argument("RiskModel: the fit has non-finite loadings, factor covariance or specific variances");
  rows_.reserve(assets_.size());
  for (Eigen::Index i = 0; i < n; ++i)
    if (!rows_.emplace(assets_[std::size_t(i)], i).second)
      throw std::invalid_argument("RiskModel: asset '" + assets_[std::size_t(i)] + "' appears twice in the fit");
  for (const ExcludedAsset& e : fit.excluded) excluded_.emplace(e.asset, e.reason);
}

Eigen::Index RiskModel::row_of(const std::string& asset) const {
  const auto it = rows_.find(asset);
  return it == rows_.end() ? -1 : it->second;
}

std::string RiskModel::reason_not_modelled(const std::string& asset) const {
  if (rows_.count(asset)) return "";  // modelled: there is nothing to explain
  const auto it = excluded_.find(asset);
  return it == excluded_.end() ? kNotInWindow : it->second;
}

PortfolioRisk portfolio_risk(const RiskModel& model, const Holdings& holdings) {
  const Eigen::Index k = model.factors();
  const int ppy = model.periods_per_year();
  PortfolioRisk out;
  out.periods_per_year = ppy;

  // Split the holdings and gather the held rows of L (row-major: each row contiguous).
  std::vector<std::size_t> held;  // index into holdings
  std::vector<Eigen::Index> rows;
  held.reserve(holdings.size());
  rows.reserve(holdings.size());
  WeightSummary& ws = out.weights;
  ws.holdings = holdings.size();
  std::unordered_set<std::string_view> unmodelled_seen;
  for (std::size_t h = 0; h < holdings.size(); ++h) {
    const double w = holdings[h].weight;
    if (!std::isfinite(w))
      throw std::invalid_argument("portfolio_risk: the weight of asset '" + holdings[h].asset + "' is not finite");
    ws.net += w;
    ws.gross += std::abs(w);
    if (w > 0) ws.long_weight += w;
    if (w < 0) ws.short_weight += w;
    const Eigen::Index row = model.row_of(holdings[h].asset);
    if (row < 0) {
      if (!unmodelled_seen.insert(holdings[h].asset).second) repeated(holdings[h].asset, "portfolio_risk");
      ws.not_modelled_gross += std::abs(w);
      out.not_modelled.push_back({holdings[h].asset, w, model.reason_not_modelled(holdings[h].asset)});
      continue;
    }
    ws.modelled_net += w;
    ws.modelled_gross += std::abs(w);
    held.push_back(h);
    rows.push_back(row);
  }
  ws.modelled = held.size();
  // A modelled asset held twice has its row twice: sorting n integers finds it for less
  // than hashing the names again would cost.
  {
    std::vector<Eigen::Index> sorted = rows;
    std::sort(sorted.begin(), sorted.end());
    const auto twice = std::adjacent_find(sorted.begin(), sorted.end());
    if (twice != sorted.end()) repeated(model.assets()[std::size_t(*twice)], "portfolio_risk");
  }

  const auto m = Eigen::Index(held.size());
  const Eigen::MatrixXd& L = model.loadings();
  RowMajor G(m, k);
  Eigen::VectorXd w(m), psi(m);
  for (Eigen::Index p = 0; p < m; ++p) {
    G.row(p) = L.row(rows[std::size_t(p)]);
    w[p] = holdings[held[std::size_t(p)]].weight;
    psi[p] = model.specific_variance()[rows[std::size_t(p)]];
  }

  // x = L_S' w_S, Phi x, and (L Phi L' w)_i for the held rows.
  out.exposures = G.transpose() * w;
  const Eigen::VectorXd phi_x = model.factor_covariance() * out.exposures;
  const Eigen::VectorXd common = G * phi_x;
  const Eigen::VectorXd psi_w = psi.cwiseProduct(w);

  const double systematic = out.exposures.dot(phi_x);
  const double specific = w.dot(psi_w);
  const double total = systematic + specific;
  out.total = figure(total, ppy);
  out.systematic = figure(systematic, ppy);
  out.specific = figure(specific, ppy);
  const double sigma = out.total.volatility;
  // Euler contributions divide by sigma; with nothing at risk they are 0 and shares undefined.
  const bool at_risk = sigma > 0;
  const double per_sigma = at_risk ? 1.0 / sigma : 0.0;
  const double per_total = at_risk ? 1.0 / total : kNaN;
  out.systematic_share = systematic * per_total;
  out.specific_volatility_contribution = specific * per_sigma;

  out.by_factor.resize(std::size_t(k));
  for (Eigen::Index j = 0; j < k; ++j) {
    FactorContribution& f = out.by_factor[std::size_t(j)];
    f.factor = j;
    f.exposure = out.exposures[j];
    f.variance = out.exposures[j] * phi_x[j];
    f.volatility = f.variance * per_sigma;
    f.share = f.variance * per_total;
  }

  out.by_asset.resize(std::size_t(m));
  for (Eigen::Index p = 0; p < m; ++p) {
    AssetContribution& a = out.by_asset[std::size_t(p)];
    a.asset = holdings[held[std::size_t(p)]].asset;
    a.weight = w[p];
    a.systematic_variance = w[p] * common[p];
    a.specific_variance = w[p] * psi_w[p];
    a.variance = a.systematic_variance + a.specific_variance;
    a.marginal = (common[p] + psi_w[p]) * per_sigma;
    a.volatility = a.variance * per_sigma;
    a.share = a.variance * per_total;
  }
  return out;
}

std::optional<Failure> weights_failure(const Holdings& holdings, const std::string& field) {
  if (const Holding* h = first_repeated(holdings))
    return failure(FailureKind::rejected, field, "", "asset '" + h->asset + "' appears more than once");
  for (const Holding& h : holdings)
    if (!std::isfinite(h.weight))
      return failure(FailureKind::rejected, field, "", "the weight of asset '" + h.asset + "' is not finite");
  return std::nullopt;
}

Holdings active_weights(const Holdings& portfolio, const Holdings& benchmark) {
  check_unique(portfolio, "active_weights (portfolio)");
  check_unique(benchmark, "active_weights (benchmark)");
  Holdings out = portfolio;
  out.reserve(portfolio.size() + benchmark.size());
  std::unordered_map<std::string_view, std::size_t> at;
  at.reserve(portfolio.size());
  for (std::size_t i = 0; i < portfolio.size(); ++i) at.emplace(portfolio[i].asset, i);
  for (const Holding& b : benchmark) {
    const auto it = at.find(b.asset);
    if (it != at.end())
      out[it->second].weight -= b.weight;
    else
      out.push_back({b.asset, -b.weight});
  }
  return out;
}

Holdings apply_trade(const Holdings& portfolio, const Holdings& changes) {
  check_unique(portfolio, "apply_trade (portfolio)");
  Holdings out = portfolio;
  out.reserve(portfolio.size() + changes.size());
  // Keys view the inputs' strings (stable), values index `out` (push_back may reallocate).
  std::unordered_map<std::string_view, std::size_t> at;
  at.reserve(portfolio.size() + changes.size());
  for (std::size_t i = 0; i < portfolio.size(); ++i) at.emplace(portfolio[i].asset, i);
  // Two changes for one asset both apply (two fills of one order, say).
  for (const Holding& c : changes) {
    const auto [it, added] = at.emplace(c.asset, out.size());
    if (added)
      out.push_back(c);
    else
      out[it->second].weight += c.weight;
  }
  return out;
}

}  // namespace factorwatch::engine
