// A model's drift window by window (against the previous and the pinned window) as CSV
// and JSON: the same bytes from `factorwatch drift` and from GET .../drift. Both carry
// the caution.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "factorwatch/pipeline/drift_query.h"

namespace factorwatch::server {

// A spreadsheet time series: the caution line, one header row (as_of, against,
// against_as_of, status, shared_assets, congruence_f1.., angle_1_degrees..,
// factor_variance_change_f1.., explained_share_change_f1.., mean_exposure_change,
// mean_communality_change, flagged), one row per window and comparison.
std::string drift_csv(const pipeline::DriftSeries& series);

// {caution, model, version, factors, thresholds, rows: [...]}.
nlohmann::ordered_json drift_json(const pipeline::DriftSeries& series);

// {"previous": x, "pinned": y}, null for a comparison whose alerts are off.
nlohmann::ordered_json thresholds_json(const storage::ModelConfig& config);

// A vector as a JSON array, NaN as null.
nlohmann::ordered_json numbers_json(const Eigen::VectorXd& v);

}  // namespace factorwatch::server
