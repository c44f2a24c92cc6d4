// Factor returns and residual returns from stored windows: the stored returns of a
// window's dates scored under the window's served factors (rotated and aligned, as every
// surface shows them; see served_windows.h), by engine::factor_scores.
//
// Data problems (no such window, a window that is not usable, an asset the window does not
// hold) are values with a message.
#pragma once

#include <Eigen/Dense>
#include <string>
#include <vector>

#include "factorwatch/engine/factor_scores.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/date_key.h"

namespace factorwatch::pipeline {

// The scores of every stored date of one window (first_date..as_of).
struct WindowScores {
  std::string failure;  // "" when scored; otherwise why not, in words
  engine::Date as_of, first_date;
  engine::FactorScores scores;  // dates first_date..as_of, factors in the served basis
  bool ok() const { return failure.empty(); }
};

// The window with this as-of date (with `at_or_before`, the latest at or before it; none the
// latest window), read in its served form.
WindowScores window_scores(storage::Database& db, long model_version_id, std::optional<engine::Date> as_of,
                           engine::ScoreMethod method,
                           bool at_or_before = true);

// One night of a factor-return series: the as-of date scored under that window's own
// served loadings.
struct FactorReturnRow {
  engine::Date as_of;              // the date scored, which is the window's as-of date
  engine::Date window_first_date;  // the window's first date (it ends on as_of)
  std::string alignment;          // the window's alignment status, "not aligned yet" before it
  Eigen::VectorXd scores;         // k; NaN when the date could not be scored
  Eigen::Index assets_used = 0;   // the window's assets with a return on the date
  std::string unscored_reason;    // "" when scored
};

struct SkippedWindow {
  engine::Date as_of;
  std::string reason;
};

struct FactorReturnSeries {
  engine::ScoreMethod method = engine::ScoreMethod::bartlett;
  std::vector<FactorReturnRow> rows;   // one per usable window, ascending by as-of date
  std::vector<SkippedWindow> skipped;  // windows in the range that give no row, and why
};

// The factor return each window assigns to its own as-of date, for the model version's
// windows with from <= as_of <= to (none = open end). Each stored date is read once.
FactorReturnSeries factor_return_series(storage::Database& db, long model_version_id, std::optional<engine::Date> from,
                                        std::optional<engine::Date> to, engine::ScoreMethod method);

// One asset's residual (specific) returns e = (x - mu) - L f over a window's dates, with
// the asset's numbers in that window for context.
struct AssetResiduals {
  std::string failure;  // "" when computed; otherwise why not, in words
  std::string asset;
  engine::Date as_of, first_date;
  engine::ScoreMethod method = engine::ScoreMethod::bartlett;
  std::vector<engine::Date> dates;  // first_date..as_of
  Eigen::VectorXd residuals;       // per date; NaN where the asset has no return or the date is unscored
  double mean = 0;                 // mu_i
  Eigen::VectorXd loadings;        // k, the served basis
  double specific_variance = 0;    // psi_i
  bool ok() const { return failure.empty(); }
};

AssetResiduals asset_residuals(storage::Database& db, long model_version_id, std::optional<engine::Date> as_of,
                               const std::string& asset,
                               engine::ScoreMethod method, bool at_or_before = true);

}  // namespace factorwatch::pipeline
