#include "factorwatch/pipeline/drift_query.h"

#include <algorithm>
#include <cmath>
#include <numeric>
#include <stdexcept>

#include "factorwatch/pipeline/window_query.h"
#include "factorwatch/storage/assets.h"
#include "factorwatch/storage/windows.h"

namespace factorwatch::pipeline {
namespace {

// The model and the range, checked in the order a reader would fix them.
QueryFailure check_range(storage::Database& db, const RangeQuery& q, storage::ModelVersion& model) {
  if (auto f = reversed_range(q)) return f;
  const auto found = storage::find_model(db, q.model);
  if (!found) return unknown_model(q.model);
  model = *found;
  return std::nullopt;
}

}  // namespace

double alert_threshold(const storage::ModelConfig& c, const std::string& against) {
  return against == "pinned" ? c.alert_below_pinned : c.alert_below;
}

std::vector<Eigen::Index> flagged_factors(const storage::DriftRecord& r, double threshold) {
  std::vector<Eigen::Index> out;
  if (!(threshold > 0) || r.status != engine::to_string(engine::DriftStatus::compared)) return out;
  for (Eigen::Index j = 0; j < r.congruence.size(); ++j) {
    const double c = r.congruence(j);
    if (!std::isfinite(c) || c < threshold) out.push_back(j);
  }
  return out;
}

Eigen::Index factor_columns(const storage::ModelConfig& c, const std::vector<storage::DriftRecord>& rows) {
  Eigen::Index k = c.fit.factors;
  for (const auto& r : rows)
    k = std::max({k, r.congruence.size(), r.principal_angles_degrees.size(), r.factor_variance_change.size(),
                  r.explained_share_change.size()});
  return k;
}

double standardized_norm(const engine::DriftComparison& c, std::size_t row) {
  return std::sqrt(c.standardized_change.row(static_cast<Eigen::Index>(row)).squaredNorm());
}


std::string factor_list(const std::vector<Eigen::Index>& factors) {
  std::string out;
  for (Eigen::Index j : factors) out += (out.empty() ? "" : "; ") + factor_name(j);
  return out;
}

QueryFailure find_drift_series(storage::Database& db, const RangeQuery& q, const std::string& against,
                               DriftSeries& out) {
  if (against != "" && against != "both" && against != "previous" && against != "pinned")
    return engine::failure(engine::FailureKind::bad_input, "against", against, "must be previous, pinned or both");
  if (auto f = check_range(db, q, out.model)) return f;
  out.rows = storage::read_drift(db, out.model.id, q.from, q.to, against == "both" ? "" : against);
  return std::nullopt;
}

QueryFailure find_window_drift(storage::Database& db, const std::string& model, std::optional<engine::Date> window,
                               const std::string& against_text, WindowDrift& out) {
  const std::string against = against_text.empty() ? "previous" : against_text;
  if (against != "previous" && against != "pinned")
    return engine::failure(engine::FailureKind::bad_input, "against", against_text,
                   "must be previous or pinned when one window is compared");
  if (!window) return engine::failure(engine::FailureKind::bad_input, "window", "", "give the window's as-of date");
  const auto found = storage::find_model(db, model);
  if (!found) return unknown_model(model);
  out.model = *found;
  const auto stamp = storage::find_window_stamp(db, out.model.id, window, true);
  if (!stamp) {
    engine::Failure f = engine::failure(engine::FailureKind::not_stored, "window", window->iso(),
                                        "model '" + model + "' has no window on or before " + window->iso() + " yet");
    f.refresh_helps = true;
    return f;
  }
  if (stamp->as_of != *window)
    out.note = "no window ends on " + window->iso() + "; showing the latest before it, as of " + stamp->as_of.iso();
  auto records = storage::read_drift(db, out.model.id, stamp->as_of, stamp->as_of, against);
  if (records.empty()) {
    // Why: not aligned yet (a refresh stores it), not usable, or nothing to compare with.
    const auto alignment = storage::read_alignment(db, stamp->row_id);
    std::string why = !alignment ? "it is not aligned yet"
                      : alignment->status == "not usable"
                          ? "its fit is not usable"
                          : "there is no usable " + against + " window to compare it with" +
                                (against == "pinned" ? " (it may be the pinned window itself)" : "");
    engine::Failure f = engine::failure(engine::FailureKind::not_stored, "window", window->iso(),
                                        "the window as of " + stamp->as_of.iso() + " has no comparison with the " +
                                            against + " window: " + why);
    f.refresh_helps = !alignment;
    return f;
  }
  out.record = std::move(records.front());
  auto comparison = compare_stored_windows(db, out.model.id, out.record.as_of, out.record.against_as_of,
                                                    out.model.config.effective_min_shared_assets());
  if (!comparison)
    return engine::failure(engine::FailureKind::not_stored, "window", window->iso(),
                   "the window as of " + out.record.as_of.iso() + " or the window it was compared with (" +
                       out.record.against_as_of.iso() + ") is no longer stored as a usable fit");
  out.comparison = std::move(*comparison);
  // Largest change of the whole standardized row first (the norm over the factors, the
  // measure the stored mean_exposure_change averages); ties keep the window's asset order.
  std::vector<double> norm(static_cast<std::size_t>(out.comparison.standardized_change.rows()));
  for (std::size_t i = 0; i < norm.size(); ++i) norm[i] = standardized_norm(out.comparison, i);
  out.order.resize(norm.size());
  std::iota(out.order.begin(), out.order.end(), std::size_t{0});
  std::stable_sort(out.order.begin(), out.order.end(), [&norm](std::size_t a, std::size_t b) { return norm[a] > norm[b]; });
  return std::nullopt;
}

QueryFailure find_asset_history(storage::Database& db, const RangeQuery& q, const std::string& asset,
                                AssetHistory& out) {
  if (asset.empty()) return engine::failure(engine::FailureKind::bad_input, "asset", asset, "name the asset");
  if (auto f = check_range(db, q, out.model)) return f;
  if (!storage::has_asset(db, asset))
    return engine::failure(engine::FailureKind::unknown_name, "asset", asset, "unknown asset (no returns stored)");
  out.asset = asset;
  out.points = exposure_history(db, out.model.id, asset, q.from, q.to);
  return std::nullopt;
}

QueryFailure find_alerts(storage::Database& db, const RangeQuery& q, AlertList& out) {
  if (auto f = check_range(db, q, out.model)) return f;
  out.alerts = storage::read_alerts(db, out.model.id, q.from, q.to);
  return std::nullopt;
}

}  // namespace factorwatch::pipeline
