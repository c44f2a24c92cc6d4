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

const char* to_string(DriftStatus s) {
  switch (s) {
    case DriftStatus::compared: return "compared";
    case DriftStatus::too_few_shared: return "too few shared assets";
    case DriftStatus::factors_differ: return "factor counts differ";
  }
  return "unknown";
}

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

  std::unordered_map<std::string, Eigen::Index> in_then;
  in_then.reserve(then.assets.size());
  for (std::size_t i = 0; i < then.assets.size(); ++i) in_then.emplace(then.assets[i], Eigen::Index(i));
  std::vector<Eigen::Index> rows_now, rows_then;
  for (std::size_t i = 0; i < now.assets.size(); ++i) {
    const auto it = in_then.find(now.assets[i]);
    if (it == in_then.end()) continue;
    rows_now.push_back(Eigen::Index(i));
    rows_then.push_back(it->second);
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
  std::vector<AssetMove> moves(drift.assets.size());
  for (std::size_t r = 0; r < moves.size(); ++r) {
    const Eigen::Index i = Eigen::Index(r);
    moves[r].asset = drift.assets[r];
    if (factor < 0) {
      moves[r].standardized_change = drift.standardized_change.row(i).norm();
      moves[r].exposure_change = drift.exposure_change.row(i).norm();
    } else {
      moves[r].standardized_change = drift.standardized_change(i, factor);
      moves[r].exposure_change = drift.exposure_change(i, factor);
    }
  }
  // Largest |change| first, ties by asset name so the list does not depend on row order;
  // a NaN ranks last (it must not break the strict weak ordering).
  const auto size = [](const AssetMove& m) {
    return std::isnan(m.standardized_change) ? -1.0 : std::abs(m.standardized_change);
  };
  const auto before = [&](const AssetMove& x, const AssetMove& y) {
    const double sx = size(x), sy = size(y);
    return sx != sy ? sx > sy : x.asset < y.asset;
  };
  const std::size_t keep = std::min(count, moves.size());
  std::partial_sort(moves.begin(), moves.begin() + std::ptrdiff_t(keep), moves.end(), before);
  moves.resize(keep);
  return moves;
}

}  // namespace factorwatch::engine
