// Reading a given covariance or correlation matrix (CSV) with its number of observations.
//
// Layout: a header row of asset names, optionally preceded by a corner cell (as R's
// write.csv writes it), then one row per asset: its name (must equal the header's name in
// the same position) and N numbers. Rows may also be bare: N numbers under a header of N
// names, read by position (recognised when the first row is as wide as the header and
// starts with a number). Every entry must be a finite number (no gaps), the
// diagonal non-negative, and the matrix symmetric: |a_ij - a_ji| <= 1e-10 times the
// entry's scale max(|a_ij|, |a_ji|, sqrt(a_ii a_jj)); the two triangles are then averaged
// so the engine receives an exactly symmetric matrix. Comment lines, quotes, CRLF and
// BOM as for returns files (returns_csv.h).
// Errors in the file throw InputError; observations <= 0 or not finite is a programming
// error (the caller validates user input) and throws std::invalid_argument.
#pragma once

#include <string>

#include "factorwatch/engine/panel.h"

namespace factorwatch::storage {

// Relative tolerance of the symmetry check (see above).
inline constexpr double kSymmetryTolerance = 1e-10;

engine::CovarianceInput read_covariance_csv(const std::string& path, double observations);

}  // namespace factorwatch::storage
