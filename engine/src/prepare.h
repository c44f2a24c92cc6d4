// From a returns panel (or a given matrix) to the basis matrix S the estimators see:
// asset screening, weighting, centring, gap handling and scaling.
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "factorwatch/engine/fit.h"
#include "moments.h"

namespace factorwatch::engine::detail {

struct PreparedData {
  std::vector<std::string> assets;     // kept assets, in input order
  std::vector<Eigen::Index> columns;   // their column in the input
  std::vector<ExcludedAsset> excluded;
  Eigen::VectorXd mean;                // N kept, return units (zeros for matrix input)
  Eigen::VectorXd variance;            // N kept, s_ii in return units squared
  Eigen::VectorXd basis_scale;         // basis unit -> return unit (sd, or ones)
  Eigen::Index periods = 0;
  double effective_sample_size = 0;
  std::string gap_handling;
  std::unique_ptr<SecondMoments> moments;  // S on the basis scale
};

// Gaps: each asset's mean and variance use its observed dates only; a gap is set
// to the asset's mean (zero after centring) and the column is rescaled by
// 1/sqrt(coverage) so that diag(S) equals the observed variance exactly. The
// off-diagonal terms then use the dates both assets share, damped by
// share_ij / sqrt(share_i share_j) <= 1; S stays positive semidefinite because it
// is still X'X of one panel.
PreparedData prepare(const ReturnsPanel& panel, const FitOptions& options);
PreparedData prepare(const CovarianceInput& input, const FitOptions& options);

}  // namespace factorwatch::engine::detail
