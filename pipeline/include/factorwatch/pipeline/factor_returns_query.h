// What a factor-returns or residuals request is about, found the same way for the CLI and
// the daemon: the model, the scoring method (Bartlett or regression), and either a range
// of windows (the series), one window (every date of it) or one asset in one window.
// Failures are QueryFailure values (drift_query.h) naming the field at fault (from, to,
// window, method, asset); each surface spells the field its own way and picks its exit
// code or HTTP status.
#pragma once

#include <string>

#include "factorwatch/engine/factor_scores.h"
#include "factorwatch/pipeline/drift_query.h"
#include "factorwatch/pipeline/factor_returns.h"
#include "factorwatch/pipeline/window_query.h"

namespace factorwatch::pipeline {

// What the numbers are, in words, for every heading and the JSON's "description":
// "factor returns (Bartlett weighted least squares scores of the centred returns)".
std::string factor_returns_description(engine::ScoreMethod method);

// The factor return each window assigns to its own as-of date, for the windows in range.
struct FactorReturnSeriesAnswer {
  storage::ModelVersion model;
  std::optional<engine::Date> from, to;  // as asked (none = open end)
  FactorReturnSeries series;
};
// `method`: bartlett, regression, or "" (bartlett).
QueryFailure find_factor_return_series(storage::Database& db, const RangeQuery& query, const std::string& method,
                                       FactorReturnSeriesAnswer& out);

// Every date of one window scored under its served factors.
struct WindowFactorReturns {
  SelectedWindow window;          // the window as served (its alignment, a note when the date had no window)
  engine::FactorScores scores;    // first_date..as_of
};
// `window`: the window ending on that date, or the latest before it; none the latest.
QueryFailure find_window_factor_returns(storage::Database& db, const std::string& model,
                                        std::optional<engine::Date> window,
                                        const std::string& method, WindowFactorReturns& out);

// One asset's residual returns over one window.
struct AssetResidualAnswer {
  SelectedWindow window;
  AssetResiduals residuals;
};
QueryFailure find_asset_residuals(storage::Database& db, const std::string& model, const std::string& asset,
                                  std::optional<engine::Date> window, const std::string& method,
                                  AssetResidualAnswer& out);

// The basis of a series: "rotation promax, each window aligned onto the previous window".
std::string series_basis_text(const storage::ModelConfig& config);

// The number of factor columns a series needs (the model's, or more if a row has more).
Eigen::Index series_factor_columns(const FactorReturnSeriesAnswer& answer);

}  // namespace factorwatch::pipeline
