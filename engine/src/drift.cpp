#include "factorwatch/engine/drift.h"

#include <algorithm>
#include <cmath>
#include <sstream>
#include <stdexcept>
#include <unordered_map>

#include "factorwatch/engine/alignment.h"

namespace factorwatch::engine {
namespace {

constexpr double kDegreesPerRadian = 180.0 / 3.14159265358979323846;

// Misuse (inconsistent sizes, a scale that is not a positive number) throws: a served
// window always has them right, so a mismatch is a programming error, not data.
void require_consistent(const WindowFactors& w, const char* which) {
  const Eigen::Index n = Eigen::Index(w.assets.size()), k = w.loadings.cols();
  std::ostringstream os;
  os << "compare_factors (" << which << "): ";
  if (w.loadings.rows() != n)
    os << w.assets.size() << " assets but " << w.loadings.rows() << " loading rows";
  else if (w.scale.size() != n)
    os << w.assets.size() << " assets but " << w.scale.size() << " scales";
  else if (w.factor_covariance.rows() != k || w.factor_covariance.cols() != k)
    os << k << " factors but a " << w.factor_covariance.rows() << " x " << w.factor_covariance.cols()
       << " factor covariance";
  else if (w.explained_share.size() != k)
    os << k << " factors but " << w.explained_share.size() << " explained shares";
  else if (n > 0 && !((w.scale.array() > 0).all() && w.scale.allFinite()))
    os << "every scale (standard deviation) must be a positive number";
  else
    return;
  throw std::invalid_argument(os.str());
}

// diag(L Phi L') without forming the N x N product.
Eigen::VectorXd communality(const Eigen::MatrixXd& loadings, const Eigen::MatrixXd& phi) {
  return (loadings * phi).cwiseProduct(loadings).rowwise().sum();
}

}  // namespace

DriftComparison compare_factors(const WindowFactors& now, const WindowFactors& then, Eigen::Index min_shared) {
  require_consistent(now, "now");
  require_consistent(then, "then");
  DriftComparison d;
  std::ostringstream message;
  const Eigen::Index k = now.loadings.cols();
  if (then.loadings.cols() != k) {
    d.status = DriftStatus::factors_differ;
    message << "now has " << k << " factors and then " << then.loadings.cols() << ": not compared";
    d.message = message.str();
    return d;
  }

  std::vector<Eigen::Index> rows_now, rows_then;
  if (now.assets == then.assets) {  // the usual case between windows: no lookup needed
    rows_now.resize(now.assets.size());
    for (std::size_t i = 0; i < now.assets.size(); ++i) rows_now[i] = Eigen::Index(i);
    rows_then = rows_now;
  } else {
    std::unordered_map<std::string, Eigen::Index> in_then;
    in_then.reserve(then.assets.size());
    for (std::size_t i = 0; i < then.assets.size(); ++i) in_then.emplace(then.assets[i], Eigen::Index(i));
    for (std::size_t i = 0; i < now.assets.size(); ++i) {
      const auto it = in_then.find(now.assets[i]);
      if (it == in_then.end()) continue;
      rows_now.push_back(Eigen::Index(i));
      rows_then.push_back(it->second);
    }
  }
  const Eigen::Index n = Eigen::Index(rows_now.size());
  // Nothing can be compared on no assets, whatever minimum was asked for.
  if (n < std::max<Eigen::Index>(min_shared, 1)) {
    d.status = DriftStatus::too_few_shared;
    message << n << " shared assets, fewer than the minimum " << std::max<Eigen::Index>(min_shared, 1)
            << ": not compared";
    d.message = message.str();
    return d;
  }

  Eigen::MatrixXd l_now(n, k), l_then(n, k), z_now(n, k), z_then(n, k);
  d.assets.reserve(std::size_t(n));
  for (Eigen::Index r = 0; r < n; ++r) {
    const Eigen::Index i = rows_now[std::size_t(r)], j = rows_then[std::size_t(r)];
    d.assets.push_back(now.assets[std::size_t(i)]);
    l_now.row(r) = now.loadings.row(i);
    l_then.row(r) = then.loadings.row(j);
    // Each window on its own correlation scale: a change in an asset's volatility alone
    // does not count as a change of factor.
    z_now.row(r) = now.loadings.row(i) / now.scale[i];
    z_then.row(r) = then.loadings.row(j) / then.scale[j];
  }

  d.status = DriftStatus::compared;
  d.congruence = tucker_congruence(z_now, z_then);
  d.principal_angles_degrees = principal_angles(z_now, z_then) * kDegreesPerRadian;
  d.exposure_change = l_now - l_then;
  d.standardized_change = z_now - z_then;
  d.communality_change = communality(l_now, now.factor_covariance) - communality(l_then, then.factor_covariance);
  d.factor_variance_change = now.factor_covariance.diagonal() - then.factor_covariance.diagonal();
  d.explained_share_change = now.explained_share - then.explained_share;

  message << "compared on " << n << " shared assets";
  if (k > 0)
    message << ": lowest congruence " << d.congruence.minCoeff() << ", largest principal angle "
            << d.principal_angles_degrees.maxCoeff() << " degrees";
  d.message = message.str();
  return d;
}

std::vector<AssetMove> largest_moves(const DriftComparison& drift, int factor, std::size_t count) {
  if (drift.status != DriftStatus::compared) return {};
  const Eigen::Index k = drift.standardized_change.cols();
  if (factor < -1 || factor >= k)
    throw std::invalid_argument("largest_moves: factor " + std::to_string(factor) + " is not -1 (all) or in [0, " +
                                std::to_string(k) + ")");
  // Ranked by index: building every asset's AssetMove (a name copy each) would cost more
  // than the ranking, and the refresh asks for the top ten of thousands, factor by factor.
  const std::size_t n = drift.assets.size();
  std::vector<double> change(n), exposure(n);
  for (std::size_t r = 0; r < n; ++r) {
    const Eigen::Index i = Eigen::Index(r);
    if (factor < 0) {
      change[r] = drift.standardized_change.row(i).norm();
      exposure[r] = drift.exposure_change.row(i).norm();
    } else {
      change[r] = drift.standardized_change(i, factor);
      exposure[r] = drift.exposure_change(i, factor);
    }
  }
  // Largest |change| first, ties by asset name so the list does not depend on row order;
  // a NaN ranks last (it must not break the strict weak ordering).
  const auto size = [&](std::size_t r) { return std::isnan(change[r]) ? -1.0 : std::abs(change[r]); };
  const auto before = [&](std::size_t x, std::size_t y) {
    const double sx = size(x), sy = size(y);
    return sx != sy ? sx > sy : drift.assets[x] < drift.assets[y];
  };
  std::vector<std::size_t> order(n);
  for (std::size_t r = 0; r < n; ++r) order[r] = r;
  const std::size_t keep = std::min(count, n);
  std::partial_sort(order.begin(), order.begin() + std::ptrdiff_t(keep), order.end(), before);
  std::vector<AssetMove> moves;
  moves.reserve(keep);
  for (std::size_t m = 0; m < keep; ++m) moves.push_back({drift.assets[order[m]], change[order[m]], exposure[order[m]]});
  return moves;
}

}  // namespace factorwatch::engine
