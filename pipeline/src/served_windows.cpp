#include "factorwatch/pipeline/served_windows.h"

#include "factorwatch/engine/factor_basis.h"
#include "factorwatch/storage/drift.h"
#include "window_comparison.h"

namespace factorwatch::pipeline {

void serve_factors(engine::FactorFit& fit, const Eigen::MatrixXd& rotation, const storage::WindowAlignment* alignment) {
  if (rotation.size() > 0) engine::change_factor_basis(fit, rotation);
  if (alignment && alignment->matrix.size() > 0 && !alignment->matrix.isIdentity(0))
    engine::change_factor_basis(fit, alignment->matrix);
}

std::optional<storage::WindowRecord> read_served_window(storage::Database& db, long model_version_id,
                                                        std::optional<engine::Date> as_of, bool at_or_before) {
  std::optional<storage::WindowRecord> record = storage::read_window(db, model_version_id, as_of, at_or_before);
  if (record) serve_factors(record->fit, record->rotation, record->alignment ? &*record->alignment : nullptr);
  return record;
}

std::optional<engine::DriftComparison> compare_stored_windows(storage::Database& db, long model_version_id,
                                                              engine::Date as_of, engine::Date against_as_of,
                                                              int min_shared) {
  const auto now = read_served_window(db, model_version_id, as_of, false);
  const auto then = read_served_window(db, model_version_id, against_as_of, false);
  if (!now || !then || !now->fit.IsSolutionUsable() || !then->fit.IsSolutionUsable()) return std::nullopt;
  // As the refresh compared them (window_comparison.h).
  return detail::compare_served(now->fit, then->fit, min_shared,
                                detail::aligned_directly_onto(now->alignment ? &*now->alignment : nullptr, then->as_of));
}

std::vector<ExposurePoint> exposure_history(storage::Database& db, long model_version_id, const std::string& asset,
                                            std::optional<engine::Date> from, std::optional<engine::Date> to) {
  std::vector<ExposurePoint> out;
  for (storage::StoredExposure& s : storage::read_stored_exposures(db, model_version_id, asset, from, to)) {
    ExposurePoint p;
    p.as_of = s.as_of;
    p.alignment = std::move(s.alignment);
    if (s.present) {
      // The served basis: rotation T, then alignment R (orthogonal, or a change of basis).
      Eigen::RowVectorXd exposures = s.fitted_exposures.transpose();
      if (s.rotation.size() > 0) exposures = exposures * s.rotation;
      if (s.alignment_matrix.size() > 0) exposures = exposures * s.alignment_matrix;
      p.present = true;
      p.exposures = exposures.transpose();
      p.specific_variance = s.specific_variance;
      p.communality = s.communality;
    }
    out.push_back(std::move(p));
  }
  return out;
}

}  // namespace factorwatch::pipeline
