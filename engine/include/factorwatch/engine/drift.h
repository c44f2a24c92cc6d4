// Drift: how one window's factors differ from another's (both already in the same
// factor basis, i.e. aligned), factor by factor and asset by asset.
#pragma once

#include <Eigen/Dense>
#include <string>
#include <vector>

namespace factorwatch::engine {

// The factors of one window as served (rotated and aligned).
struct WindowFactors {
  std::vector<std::string> assets;
  Eigen::MatrixXd loadings;           // N x k, return units (the served exposures)
  Eigen::VectorXd scale;              // N, each asset's standard deviation
  Eigen::MatrixXd factor_covariance;  // k x k
  Eigen::VectorXd explained_share;    // k, each factor's share of the basis matrix's trace
};

enum class DriftStatus { compared, too_few_shared, factors_differ };
const char* to_string(DriftStatus s);  // "compared", "too few shared assets", "factor counts differ"

struct DriftComparison {
  DriftStatus status = DriftStatus::compared;
  std::string message;
  // The shared assets, in `now`'s order; every per-asset member below follows it.
  std::vector<std::string> assets;
  // Tucker congruence per factor (Tucker 1951) of the standardized loadings on the shared
  // assets. Interpretive bands (Lorenzo-Seva and ten Berge 2006): >= 0.95 the factors are
  // equal, 0.85-0.95 fair similarity, below 0.85 not the same factor.
  Eigen::VectorXd congruence;
  // Principal angles (Bjorck and Golub 1973) between the spans of the two standardized
  // loading matrices on the shared assets, in degrees, ascending: rotation-free, so they
  // say whether the factor space itself moved, whatever happened to single factors.
  Eigen::VectorXd principal_angles_degrees;
  // now - then, per shared asset: exposures in return units (N x k), the same on the
  // correlation scale (loadings / scale), and communality diag(L Phi L') in return units.
  Eigen::MatrixXd exposure_change;
  Eigen::MatrixXd standardized_change;
  Eigen::VectorXd communality_change;
  // now - then, per factor: diag of the factor covariance, and explained share.
  Eigen::VectorXd factor_variance_change;
  Eigen::VectorXd explained_share_change;
};

// Compares `now` with `then` on their shared assets. Fewer than min_shared shared assets,
// or different factor counts, give that status and empty members (no shared asset at all is
// always too few). Inconsistent sizes or a scale that is not positive throw std::invalid_argument.
DriftComparison compare_factors(const WindowFactors& now, const WindowFactors& then, Eigen::Index min_shared);

struct AssetMove {
  std::string asset;
  double standardized_change = 0;  // on the factor asked for (or the row norm, for all factors)
  double exposure_change = 0;      // the same in return units (row norm for all factors)
};

// The `count` shared assets whose standardized exposure to `factor` (0-based) changed the
// most in absolute value, largest first; factor -1 ranks by the norm of the whole row.
// Ties go by asset name. Empty unless drift.status is compared; a factor outside [-1, k)
// throws std::invalid_argument.
std::vector<AssetMove> largest_moves(const DriftComparison& drift, int factor, std::size_t count);

}  // namespace factorwatch::engine
