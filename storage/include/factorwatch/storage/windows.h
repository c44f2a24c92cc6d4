// Fitted windows: every stored number of a FactorFit, with the provenance that says what
// produced it (configuration hash, input fingerprint, as-of date, timing).
#pragma once

#include <limits>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "factorwatch/engine/build_info.h"
#include "factorwatch/engine/fit.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/date_key.h"

namespace factorwatch::storage {

// How a window's factors were aligned onto its reference (see refresh.h).
struct WindowAlignment {
  std::string status;        // engine::to_string(AlignmentStatus), or "not usable"
  std::string message;       // in words
  std::string reference;     // previous | pinned | smoothed
  std::optional<engine::Date> reference_as_of;  // the reference window; none for smoothed or none
  long long shared = 0;      // assets both windows have
  Eigen::MatrixXd matrix;    // R (k x k, orthogonal); identity unless aligned
  double residual = 0;       // relative Procrustes residual; NaN unless aligned
  Eigen::VectorXd factor_fit;  // congruence of each aligned factor with the reference
  std::string aligned_at;    // UTC
};

struct WindowRecord {
  engine::Date as_of;       // the window's last date
  engine::Date first_date;  // its first date
  // Stored dates between first_date and as_of that are not in the window: the model's
  // calendar left them out (too little of its universe traded). Ascending; empty for
  // nearly every window.
  std::vector<engine::Date> skipped_dates;
  std::string configuration_hash;
  std::string input_hash;  // fingerprint of the dates, assets and returns the fit saw
  engine::FactorFit fit;   // restored exactly as fitted (fit.assets: the fitted assets)
  double total_seconds = 0;  // reading, fitting and writing the window
  std::string fitted_at;     // UTC
  bool stale = false;        // returns inside the window changed after the fit
  // T (k x k) of the model's rotation, computed when the window was fitted; empty = none.
  Eigen::MatrixXd rotation;
  // What built the numbers (program, Eigen and Spectra versions, the build's flags); every
  // field "" for a window fitted before schema 8 recorded it.
  engine::BuildInfo provenance;
  // How the window was aligned; nullopt until the refresh has aligned it (read only:
  // save_window ignores it and removes the old row's alignment and drift).
  std::optional<WindowAlignment> alignment;
};

// One line of `factorwatch windows`.
struct WindowSummary {
  engine::Date as_of, first_date;
  Eigen::Index periods = 0;
  int asset_count = 0;
  int excluded_count = 0;
  int factors = 0;
  std::string termination;
  bool usable = false;
  // Why a window has no usable fit: its fit's message (stored with every window, so also
  // read from windows fitted before it was shown); "" for a usable window.
  std::string reason;
  bool warm_started = false;
  int iterations = 0;
  // ML's stopping criterion at the stored estimate; NaN for other methods and for windows
  // fitted before the gradient rule.
  double largest_scaled_gradient = std::numeric_limits<double>::quiet_NaN();
  double log_likelihood = 0;
  double explained_total = 0;
  int heywood_count = 0;
  double fit_seconds = 0;
  double total_seconds = 0;
  bool stale = false;
  // The window's alignment status (WindowAlignment::status), "not aligned yet" before the
  // refresh aligned it, and its relative Procrustes residual (NaN unless aligned).
  std::string alignment = "not aligned yet";
  double alignment_residual = std::numeric_limits<double>::quiet_NaN();
};

// What tells one stored fit from another without reading its matrices: a key for the
// daemon's response cache. A refit replaces the row, and its fitted_at and measured
// total_seconds (and, after a correction, input_hash) differ from the old row's.
struct WindowStamp {
  engine::Date as_of;
  long long row_id = 0;
  std::string fitted_at;
  std::string input_hash;
  double total_seconds = 0;
  bool stale = false;
  std::string alignment;  // fingerprint of the alignment R; "" until aligned (a realignment changes what is served)
  bool usable = true;       // the fit converged or stopped at its iteration limit
  std::string termination;  // how the fit ended ("numerical_failure" and the like when not usable)
  std::string reason;       // why it is not usable (the fit's message); "" when usable

  std::string key() const;  // all of the above in one string
};

// Inserts or replaces the window (model version, as-of) in its own transaction. A
// replaced window's alignment, drift and alerts go with it (the refresh realigns).
//
// `input_rows`: the digest of the returns rows the fit read (their dates and checksums,
// detail::ReturnsSpan::rows_digest). In the same transaction as the write it is compared
// with the rows stored now, and the window is stored stale when they differ: a load that
// committed between the refresh's read and this write changed the window's data, and
// its own stale marking could not see a window not stored yet. Returns false then.
bool save_window(Database& db, long model_version_id, const WindowRecord& window,
                 std::optional<std::uint64_t> input_rows = std::nullopt);

std::vector<WindowSummary> list_windows(Database& db, long model_version_id);

// Which windows a model version has, and whether each is stale: what the refresh plans
// from, without reading a window's statistics.
struct WindowState {
  engine::Date as_of;
  bool stale = false;
};
std::vector<WindowState> window_states(Database& db, long model_version_id);

// How many windows a model version has, how many are stale, and the latest as-of date
// (none when there is no window): one aggregate query, no statistics parsed.
struct WindowCounts {
  std::size_t windows = 0;
  std::size_t stale = 0;
  std::optional<engine::Date> latest_as_of;
};
WindowCounts count_windows(Database& db, long model_version_id);

// The window with this as-of date, or with `at_or_before` the latest one at or before it;
// no as_of means the latest window. nullopt when there is none. Its fit is as the engine
// returned it (the canonical form the next window warm-starts from), with the rotation T
// and the alignment R stored beside it; the factors every surface shows are that fit
// turned by T and R, which the pipeline composes (pipeline/served_windows.h).
std::optional<WindowRecord> read_window(Database& db, long model_version_id, std::optional<engine::Date> as_of,
                                        bool at_or_before = true);

// The alignment row of a window (by its row id); nullopt until the refresh aligned it.
std::optional<WindowAlignment> read_alignment(Database& db, long long window_id);

// The stamp of the window read_window would return, from one indexed row, no BLOBs; with
// `usable_only`, of the latest window among those whose fit is usable.
std::optional<WindowStamp> find_window_stamp(Database& db, long model_version_id, std::optional<engine::Date> as_of,
                                             bool at_or_before = true, bool usable_only = false);

}  // namespace factorwatch::storage
