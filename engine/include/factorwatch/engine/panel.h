// A window of asset returns: T dates by N assets, with gaps.
#pragma once

#include <Eigen/Dense>
#include <string>
#include <vector>

#include "factorwatch/engine/date.h"

namespace factorwatch::engine {

// Row-major so that one date's cross-section is contiguous: the fused kernels
// stream the panel one row block at a time.
using RowMatrix = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

// T x N returns; a quiet NaN marks a gap (asset not listed, or no print that day).
struct ReturnsPanel {
  std::vector<Date> dates;          // ascending
  std::vector<std::string> assets;  // column names, unique
  RowMatrix values;                 // dates.size() x assets.size()

  Eigen::Index periods() const { return values.rows(); }
  Eigen::Index width() const { return values.cols(); }

  // The last `periods` dates (all of them when periods >= T). Assets keep their columns.
  ReturnsPanel last(Eigen::Index periods) const;
};

// A given covariance or correlation matrix with the number of observations behind it.
struct CovarianceInput {
  std::vector<std::string> assets;
  Eigen::MatrixXd matrix;    // N x N, symmetric
  double observations = 0;  // n, used by the likelihood-ratio test
};

}  // namespace factorwatch::engine
