// Drift between windows as the refresh stored it: per window, the comparison with the
// previous usable window and with the pinned window (congruence per factor, principal
// angles, changes of factor variances and explained shares, the assets that moved most),
// and the alerts the model's thresholds raised. Also an asset's exposures across windows.
// The pass that computes and writes them is the pipeline's (pipeline/src/align_windows.cpp);
// its rows are written through window_alignments.h.
#pragma once

#include <Eigen/Dense>
#include <optional>
#include <string>
#include <vector>

#include "factorwatch/engine/drift.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/date_key.h"

namespace factorwatch::storage {

// How many of the assets that moved most are kept per factor and window.
inline constexpr std::size_t kMoversKept = 10;

struct DriftRecord {
  engine::Date as_of;          // the window
  std::string against;         // "previous" or "pinned"
  engine::Date against_as_of;  // the window compared with
  std::string status;         // engine::to_string(DriftStatus)
  long long shared = 0;
  Eigen::VectorXd congruence;                // per factor; empty unless compared
  Eigen::VectorXd principal_angles_degrees;  // ascending
  Eigen::VectorXd factor_variance_change;
  Eigen::VectorXd explained_share_change;
  double mean_exposure_change = 0;  // mean over shared assets of the standardized row change's norm
  double communality_change = 0;    // mean absolute change, return units squared
  // movers[j]: the assets whose standardized exposure to factor j + 1 changed most.
  std::vector<std::vector<engine::AssetMove>> movers;
};

struct DriftAlert {
  engine::Date as_of;
  std::string against;
  engine::Date against_as_of;
  int factor = 0;  // 1-based
  double congruence = 0, threshold = 0;
  std::vector<engine::AssetMove> movers;  // of that factor
};

// No date means an open end; against "" means both comparisons. Ascending by as-of date.
std::vector<DriftRecord> read_drift(Database& db, long model_version_id, std::optional<engine::Date> from,
                                    std::optional<engine::Date> to, const std::string& against = "");
std::vector<DriftAlert> read_alerts(Database& db, long model_version_id, std::optional<engine::Date> from,
                                    std::optional<engine::Date> to);

// One window in an asset's history as stored: its exposures as fitted with the window's
// rotation T and alignment R beside them (the served exposures are the row times T times
// R, which the pipeline composes), its specific variance and communality; or absent (not
// in that window's fitted assets, or the fit is not usable).
struct StoredExposure {
  engine::Date as_of;
  bool present = false;
  Eigen::VectorXd fitted_exposures;  // k, return units, as the engine fitted them
  Eigen::MatrixXd rotation;          // T; empty when none
  Eigen::MatrixXd alignment_matrix;  // R; empty until aligned
  double specific_variance = 0, communality = 0;
  std::string alignment;  // the window's alignment status
};
std::vector<StoredExposure> read_stored_exposures(Database& db, long model_version_id, const std::string& asset,
                                                  std::optional<engine::Date> from,
                                                  std::optional<engine::Date> to);

}  // namespace factorwatch::storage
