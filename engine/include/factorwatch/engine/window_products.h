// The date-by-date inner products of a window's returns, carried from one window to the
// next. Consecutive windows of a rolling model share all but a few dates, and the T x T
// Gram matrix every wide fit starts from (NUMERICS.md: the eigenvalues of X'X are those of
// X X') is, before centring and weighting, R = Z Z' of the raw returns Z. When the window
// moves forward by s dates, the rows of R for the dates both windows hold are the same
// numbers; only the s new dates' rows are computed, O(s T N) instead of O(T^2 N).
//
// Round-off. No entry of R is ever updated in place: each R_ab is one dot product of two
// dates' stored returns, computed once (by the blocked product or a matrix-vector product)
// and moved, never added to. Its error is therefore that of one dot product,
// |R_ab - z_a . z_b| <= gamma_N ||z_a|| ||z_b||, gamma_N = N u / (1 - N u), u = 2^-53
// (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., eq. 3.5), after one
// shift or a thousand: nothing accumulates, so no periodic recomputation is needed to bound
// it. The fit's centred Gram formed from R (prepare.cpp) adds the cancellation of removing
// the mean, a factor 1 + mu'mu / tr(S) on that bound; daily returns have mu'mu / tr(S) of
// order 1e-3. The overlap is reused only when it is provably the same data: identical asset
// list, the held dates shifted forward, and a 64-bit digest of every shared date's values
// unchanged; anything else (a revised return, a new asset, a gap) recomputes R from scratch.
//
// A workspace, not a cache of results: hold one object per rolling sequence of fits and
// pass it in FitOptions::products; a fit brings it up to date with its own window first.
#pragma once

#include <Eigen/Dense>
#include <cstdint>
#include <string>
#include <vector>

#include "factorwatch/engine/panel.h"

namespace factorwatch::engine {

class WindowProducts {
 public:
  struct Update {
    bool usable = false;            // R describes the panel (false: the panel has a gap)
    Eigen::Index reused_rows = 0;   // dates whose rows came from the previous window
    Eigen::Index computed_rows = 0; // dates whose rows were computed now
  };

  // Brings R to `panel` (O(T N) to check the overlap, O(s T N) for s new dates).
  const Update& update(const ReturnsPanel& panel);
  const Update& last_update() const { return last_; }
  // R = Z Z' of the panel last passed to update(); meaningful only when usable.
  const Eigen::MatrixXd& raw() const { return R_; }

 private:
  std::vector<Date> dates_;
  std::vector<std::string> assets_;
  std::vector<std::uint64_t> row_digests_;
  Eigen::MatrixXd R_;
  Update last_;
};

}  // namespace factorwatch::engine
