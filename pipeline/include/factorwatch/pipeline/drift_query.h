// What a drift, history or alerts request is about, found the same way for the CLI and the
// daemon: the model, a date range, the comparison (against the previous or the pinned
// window), one window or one asset. Failures are engine::Failure values naming the field
// at fault (from, to, against, window, asset, or model); each surface spells the field its
// own way ("option '--from'", "query parameter 'from'") and maps the kind to its exit code
// or HTTP status.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "factorwatch/engine/drift.h"
#include "factorwatch/engine/failure.h"
#include "factorwatch/pipeline/request_dates.h"
#include "factorwatch/pipeline/served_windows.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/drift.h"
#include "factorwatch/storage/models.h"

namespace factorwatch::pipeline {

// Drift rows of every window in the range: against "previous", "pinned" or both ("").
struct DriftSeries {
  storage::ModelVersion model;
  std::vector<storage::DriftRecord> rows;
};
// `against`: previous, pinned, or both ("" means both too).
QueryFailure find_drift_series(storage::Database& db, const RangeQuery& query, const std::string& against,
                               DriftSeries& out);

// One window compared, asset by asset, with the window it was compared with when stored.
struct WindowDrift {
  storage::ModelVersion model;
  storage::DriftRecord record;          // as stored: congruence, angles, changes per factor
  engine::DriftComparison comparison;   // recomputed from the served factors: every shared asset
  std::vector<std::size_t> order;       // rows of comparison, largest standardized change first
  std::string note;                     // when the date asked for has no window of its own
};
// `window`: the window ending on that date, or the latest before it (required). `against`:
// previous (also for "") or pinned.
QueryFailure find_window_drift(storage::Database& db, const std::string& model, std::optional<engine::Date> window,
                               const std::string& against, WindowDrift& out);

// One asset's served exposures in every window of the range.
struct AssetHistory {
  storage::ModelVersion model;
  std::string asset;
  std::vector<ExposurePoint> points;
};
QueryFailure find_asset_history(storage::Database& db, const RangeQuery& query, const std::string& asset,
                                AssetHistory& out);

// The alerts raised on the windows of the range.
struct AlertList {
  storage::ModelVersion model;
  std::vector<storage::DriftAlert> alerts;
};
QueryFailure find_alerts(storage::Database& db, const RangeQuery& query, AlertList& out);

// The model's alert threshold for a comparison ("previous" or "pinned"); 0 = no alerts.
double alert_threshold(const storage::ModelConfig& config, const std::string& against);

// The factors (0-based) a stored comparison flags: compared, threshold above 0, and a
// congruence below it or missing (a vanished factor), as the refresh raises its alerts.
std::vector<Eigen::Index> flagged_factors(const storage::DriftRecord& record, double threshold);

// The number of factor columns a view of these rows needs (the model's, or more if a
// stored row has more).
Eigen::Index factor_columns(const storage::ModelConfig& config, const std::vector<storage::DriftRecord>& rows);

// The Euclidean norm of row i of the standardized change: how far the asset moved over all
// factors, the order of the one-window comparison.
double standardized_norm(const engine::DriftComparison& comparison, std::size_t row);

// "f1; f3" for flagged factors; "" when none.
std::string factor_list(const std::vector<Eigen::Index>& factors);

}  // namespace factorwatch::pipeline
