// Windows as every surface shows them. Storage keeps each fit as the engine returned it,
// with the model's rotation T and the window's alignment R beside it (storage/windows.h);
// the served factors are that fit turned by T and then R: the same model L Phi L', in the
// basis that stays comparable from one window to the next.
#pragma once

#include <Eigen/Dense>
#include <optional>
#include <string>
#include <vector>

#include "factorwatch/engine/drift.h"
#include "factorwatch/engine/fit.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/windows.h"

namespace factorwatch::pipeline {

// The fit's served form: rotation T, then alignment R (when given), applied to the loadings
// and the factor covariance (engine::change_factor_basis).
void serve_factors(engine::FactorFit& fit, const Eigen::MatrixXd& rotation, const storage::WindowAlignment* alignment);

// storage::read_window, with the fit in its served form.
std::optional<storage::WindowRecord> read_served_window(storage::Database& db, long model_version_id,
                                                        std::optional<engine::Date> as_of,
                                                        bool at_or_before = true);

// The whole comparison of one window with another, computed from the stored (served)
// factors: every shared asset's change, not only the movers kept. nullopt when either
// window is missing or not usable.
std::optional<engine::DriftComparison> compare_stored_windows(storage::Database& db, long model_version_id,
                                                              engine::Date as_of, engine::Date against_as_of,
                                                              int min_shared);

// One window in an asset's history: its served exposures (rotated and aligned), specific
// variance and communality, or absent (not in that window's fitted assets).
struct ExposurePoint {
  engine::Date as_of;
  bool present = false;
  Eigen::VectorXd exposures;  // k, return units
  double specific_variance = 0, communality = 0;
  std::string alignment;  // the window's alignment status
};
std::vector<ExposurePoint> exposure_history(storage::Database& db, long model_version_id, const std::string& asset,
                                            std::optional<engine::Date> from, std::optional<engine::Date> to);

}  // namespace factorwatch::pipeline
