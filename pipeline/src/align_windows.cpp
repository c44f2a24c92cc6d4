#include "align_windows.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "factorwatch/engine/alignment.h"
#include "factorwatch/engine/drift.h"
#include "factorwatch/engine/factor_basis.h"
#include "factorwatch/pipeline/served_windows.h"
#include "factorwatch/storage/date_key.h"
#include "factorwatch/storage/drift.h"
#include "factorwatch/storage/window_alignments.h"
#include "factorwatch/storage/windows.h"
#include "window_comparison.h"

namespace factorwatch::pipeline::detail {
namespace {

using storage::AlignmentState;
using storage::AlignTo;
using storage::Database;
using storage::ModelConfig;
using storage::ModelVersion;
using storage::WindowAlignment;
using storage::WindowRecord;

using Clock = std::chrono::steady_clock;
constexpr std::size_t kNone = static_cast<std::size_t>(-1);
// Windows written per transaction: one commit (and WAL sync) per window would cost more
// than the alignment itself; a stop still leaves whole windows.
constexpr std::size_t kWindowsPerCommit = 32;

engine::NamedLoadings standardized(const engine::FactorFit& fit) { return {fit.assets, fit.standardized_loadings()}; }

// A stored window as served (its rotation and its stored alignment applied); nullopt when
// it is missing or its fit is not usable.
std::optional<engine::FactorFit> served_window(Database& db, long model_version_id, engine::Date as_of) {
  auto w = read_served_window(db, model_version_id, as_of, false);
  if (!w || !w->fit.IsSolutionUsable()) return std::nullopt;
  return std::move(w->fit);
}

bool below(double congruence, double threshold) {
  return !(std::isfinite(congruence) && congruence >= threshold);  // a NaN congruence (a vanished factor) is below
}

// Stores one comparison and the alerts its congruences raise; returns the alert count.
// With `prior` (the previous window's congruences against the same pinned window), a
// factor is flagged only when it falls below the threshold, not again in every later
// window that stays below: a change since the pinned window is news once.
std::size_t write_drift(Database& db, long long window_id, const char* against, engine::Date against_as_of,
                        const engine::DriftComparison& d, double threshold, const Eigen::VectorXd* prior = nullptr) {
  storage::DriftRecord record;
  record.against = against;
  record.against_as_of = against_as_of;
  record.status = engine::to_string(d.status);
  record.shared = static_cast<long long>(d.assets.size());
  record.congruence = d.congruence;
  record.principal_angles_degrees = d.principal_angles_degrees;
  record.factor_variance_change = d.factor_variance_change;
  record.explained_share_change = d.explained_share_change;
  const auto k = static_cast<int>(d.congruence.size());
  for (int j = 0; j < k; ++j) record.movers.push_back(engine::largest_moves(d, j, storage::kMoversKept));
  const bool compared = d.status == engine::DriftStatus::compared && d.standardized_change.rows() > 0;
  if (compared) {  // a plain loop: Eigen's vectorised rowwise().norm() trips GCC 12's AVX-512 warnings
    const Eigen::VectorXd squares = d.standardized_change.rowwise().squaredNorm();
    for (Eigen::Index i = 0; i < squares.size(); ++i) record.mean_exposure_change += std::sqrt(squares(i));
    record.mean_exposure_change /= static_cast<double>(squares.size());
    record.communality_change = d.communality_change.cwiseAbs().mean();
  }
  storage::save_drift(db, window_id, record);
  std::size_t alerts = 0;
  if (!(threshold > 0) || !compared) return alerts;
  for (int j = 0; j < k; ++j) {
    const double c = d.congruence(j);
    if (!below(c, threshold)) continue;
    if (prior && prior->size() == k && below((*prior)(j), threshold)) continue;  // already below: flagged before
    storage::DriftAlert alert;
    alert.against = against;
    alert.factor = j + 1;
    alert.congruence = c;
    alert.threshold = threshold;
    storage::save_alert(db, window_id, alert);
    ++alerts;
  }
  return alerts;
}

}  // namespace

void FittedWindows::keep(engine::Date as_of, const WindowRecord& record) {
  const engine::FactorFit& f = record.fit;
  // The matrices and the asset names dominate; strings count at a typical 40 bytes.
  const std::size_t size = sizeof(double) * static_cast<std::size_t>(f.loadings.size() + 8 * f.assets.size() +
                                                                     f.eigenvalues.size()) +
                           40 * f.assets.size();
  if (bytes_ + size > kMaxBytes) return;
  bytes_ += size;
  records_[as_of] = record;
}

std::optional<WindowRecord> FittedWindows::take(engine::Date as_of) {
  const auto it = records_.find(as_of);
  if (it == records_.end()) return std::nullopt;
  std::optional<WindowRecord> out = std::move(it->second);
  records_.erase(it);
  return out;
}

AlignmentRun align_windows(Database& db, const ModelVersion& model, const std::atomic<bool>* stop,
                           FittedWindows* fitted) {
  const auto start_time = Clock::now();
  AlignmentRun run;
  const ModelConfig& c = model.config;
  const std::vector<AlignmentState> rows = storage::alignment_states(db, model.id);
  const auto missing = std::find_if(rows.begin(), rows.end(), [](const AlignmentState& r) { return !r.aligned; });
  if (missing == rows.end()) return run;

  std::size_t pinned = kNone;
  if (!rows.empty()) {
    if (!c.pinned_window) {
      pinned = 0;
    } else {
      for (std::size_t i = 0; i < rows.size() && pinned == kNone; ++i)
        if (rows[i].as_of >= *c.pinned_window) pinned = i;
    }
  }
  std::size_t start = static_cast<std::size_t>(missing - rows.begin());
  if (pinned != kNone && start <= pinned) start = 0;  // every window is compared with the pinned one

  const engine::AlignmentOptions options{c.effective_min_shared_assets()};
  const int min_shared = options.min_shared_assets;
  const std::string kind = to_string(c.align_to);

  std::optional<engine::FactorFit> previous;  // served, the last usable window before the current one
  engine::Date previous_as_of;
  std::optional<engine::FactorFit> pinned_fit;  // served
  bool pinned_known = false;
  std::unique_ptr<engine::SmoothedReference> smooth;
  if (c.align_to == AlignTo::smoothed) smooth = std::make_unique<engine::SmoothedReference>(c.smoothing_half_life);

  // What the windows before `start` contribute: they keep their alignment.
  for (std::size_t j = start; j-- > 0;)
    if (rows[j].usable) {
      previous = served_window(db, model.id, rows[j].as_of);
      previous_as_of = rows[j].as_of;
      break;
    }
  if (smooth)
    for (std::size_t j = 0; j < start; ++j)
      if (rows[j].usable)
        if (auto fit = served_window(db, model.id, rows[j].as_of)) smooth->add(standardized(*fit));
  if (pinned != kNone && pinned < start) {
    pinned_fit = served_window(db, model.id, rows[pinned].as_of);
    pinned_known = true;
  }
  // Aligned onto the pinned window, that window's frame is its own (rotated) fit.
  if (c.align_to == AlignTo::pinned && pinned != kNone && !pinned_known) {
    if (auto w = read_window(db, model.id, rows[pinned].as_of, false);
        w && w->fit.IsSolutionUsable()) {
      engine::change_factor_basis(w->fit, w->rotation);
      pinned_fit = std::move(w->fit);
    }
    pinned_known = true;
  }

  std::optional<storage::WriteBatch> transaction;
  std::size_t in_transaction = 0;
  const auto commit = [&] {
    if (transaction) transaction->commit();
    transaction.reset();
    in_transaction = 0;
  };
  std::vector<std::size_t> deferred;  // compared with the pinned window once it is aligned
  // The previous usable window's congruences with the pinned window: an alert against the
  // pinned window is raised when a factor falls below the threshold, moving away from it.
  const Eigen::VectorXd at_pinned = Eigen::VectorXd::Ones(c.fit.factors);
  std::optional<Eigen::VectorXd> prior_pinned;
  if (pinned != kNone && start > pinned) {
    for (std::size_t j = start; j-- > pinned && !prior_pinned;) {
      if (!rows[j].usable) continue;
      if (j == pinned) {
        prior_pinned = at_pinned;
      } else {
        const auto stored = read_drift(db, model.id, rows[j].as_of, rows[j].as_of, "pinned");
        prior_pinned = stored.empty() ? at_pinned : stored.front().congruence;
      }
    }
  }

  for (std::size_t i = start; i < rows.size(); ++i) {
    if (stop && stop->load()) {
      // Windows still waiting for their comparison with the pinned window lose their
      // alignment too, so the next run (which starts at the first unaligned window) redoes them.
      if (!deferred.empty() && !transaction) transaction.emplace(db);
      for (std::size_t d : deferred) storage::forget_alignment(db, rows[d].window_id);
      commit();
      run.stopped = true;
      run.seconds = std::chrono::duration<double>(Clock::now() - start_time).count();
      return run;
    }
    std::optional<WindowRecord> record = fitted ? fitted->take(rows[i].as_of) : std::nullopt;
    if (!record) record = read_window(db, model.id, rows[i].as_of, false);
    if (!transaction) transaction.emplace(db);
    storage::forget_drift(db, rows[i].window_id);
    WindowAlignment row;
    row.residual = std::nan("");  // stored as none unless aligned
    row.reference = kind;
    if (!record || !record->fit.IsSolutionUsable()) {
      row.status = "not usable";
      row.message = "the fit of this window is not usable: nothing to align or compare";
      row.matrix = Eigen::MatrixXd::Identity(c.fit.factors, c.fit.factors);
      storage::save_alignment(db, rows[i].window_id, row);
      ++run.aligned;
      if (++in_transaction == kWindowsPerCommit) commit();
      continue;
    }
    engine::FactorFit fit = std::move(record->fit);
    engine::change_factor_basis(fit, record->rotation);

    engine::NamedLoadings reference;
    std::string no_reference;
    switch (c.align_to) {
      case AlignTo::previous:
        if (previous) {
          reference = standardized(*previous);
          row.reference_as_of = previous_as_of;
        } else {
          no_reference = "the first usable window: the frame later windows are chained to";
        }
        break;
      case AlignTo::pinned:
        if (i == pinned) {
          no_reference = "the pinned window: the frame the other windows are aligned to";
        } else if (pinned_fit) {
          reference = standardized(*pinned_fit);
          row.reference_as_of = rows[pinned].as_of;
        } else {
          no_reference = pinned == kNone ? "the pinned window " + engine::iso_or_empty(c.pinned_window) + " is not fitted yet"
                                         : "the pinned window's fit is not usable";
        }
        break;
      case AlignTo::smoothed:
        if (smooth && !smooth->empty()) reference = smooth->reference();
        else no_reference = "the first usable window: the smoothed reference starts from it";
        break;
    }
    const engine::Alignment alignment = engine::align_to_reference(standardized(fit), reference, options);
    row.status = engine::to_string(alignment.status);
    row.message = no_reference.empty() ? alignment.message : no_reference;
    row.shared = alignment.shared;
    row.matrix = alignment.rotation;
    row.residual = alignment.residual;
    row.factor_fit = alignment.factor_fit;
    if (alignment.status == engine::AlignmentStatus::aligned) engine::change_factor_basis(fit, alignment.rotation);
    storage::save_alignment(db, rows[i].window_id, row);
    if (i == pinned && !pinned_known) {
      pinned_fit = fit;
      pinned_known = true;
    }

    if (previous) {
      const bool in_its_basis = aligned_directly_onto(&row, previous_as_of);
      run.alerts += write_drift(db, rows[i].window_id, "previous", previous_as_of,
                                compare_served(fit, *previous, min_shared, in_its_basis), c.alert_below);
    }
    if (i == pinned) prior_pinned = at_pinned;
    if (pinned != kNone && i != pinned) {
      if (i < pinned) {
        deferred.push_back(i);  // compared after the loop, walking back from the pinned window
      } else if (pinned_fit) {
        const bool in_its_basis = aligned_directly_onto(&row, rows[pinned].as_of);
        const engine::DriftComparison d = compare_served(fit, *pinned_fit, min_shared, in_its_basis);
        run.alerts += write_drift(db, rows[i].window_id, "pinned", rows[pinned].as_of, d, c.alert_below_pinned,
                                  prior_pinned ? &*prior_pinned : nullptr);
        if (d.status == engine::DriftStatus::compared) prior_pinned = d.congruence;
      }
    }
    if (smooth) smooth->add(standardized(fit));
    previous = std::move(fit);
    previous_as_of = rows[i].as_of;
    ++run.aligned;
    if (++in_transaction == kWindowsPerCommit) commit();
  }
  commit();

  // Windows before the pinned one, from the nearest back: "falls below" moving away from it.
  if (pinned_fit) {
    std::optional<Eigen::VectorXd> prior = at_pinned;
    for (auto it = deferred.rbegin(); it != deferred.rend(); ++it) {
      const std::size_t i = *it;
      const std::optional<WindowRecord> w = read_served_window(db, model.id, rows[i].as_of, false);
      if (!w || !w->fit.IsSolutionUsable()) continue;
      if (!transaction) transaction.emplace(db);
      storage::forget_drift(db, rows[i].window_id, "pinned");
      const engine::DriftComparison d =
          compare_served(w->fit, *pinned_fit, min_shared,
                         aligned_directly_onto(w->alignment ? &*w->alignment : nullptr, rows[pinned].as_of));
      run.alerts += write_drift(db, rows[i].window_id, "pinned", rows[pinned].as_of, d, c.alert_below_pinned, &*prior);
      if (d.status == engine::DriftStatus::compared) prior = d.congruence;
      if (++in_transaction == kWindowsPerCommit) commit();
    }
    commit();
  }
  run.seconds = std::chrono::duration<double>(Clock::now() - start_time).count();
  return run;
}

}  // namespace factorwatch::pipeline::detail
