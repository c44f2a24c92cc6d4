// Fitted windows: every stored number of a FactorFit, with the provenance that says what
// produced it (configuration hash, input fingerprint, as-of date, timing).
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "factorwatch/engine/fit.h"
#include "factorwatch/storage/database.h"

namespace factorwatch::storage {

struct WindowRecord {
  std::string as_of;       // the window's last date
  std::string first_date;  // its first date
  std::string configuration_hash;
  std::string input_hash;  // fingerprint of the dates, assets and returns the fit saw
  engine::FactorFit fit;   // restored exactly as fitted (fit.assets: the fitted assets)
  double total_seconds = 0;  // reading, fitting and writing the window
  std::string fitted_at;     // UTC
  bool stale = false;        // returns inside the window changed after the fit
};

// One line of `factorwatch windows`.
struct WindowSummary {
  std::string as_of, first_date;
  Eigen::Index periods = 0;
  int asset_count = 0;
  int excluded_count = 0;
  int factors = 0;
  std::string termination;
  bool usable = false;
  bool warm_started = false;
  int iterations = 0;
  double log_likelihood = 0;
  double explained_total = 0;
  int heywood_count = 0;
  double fit_seconds = 0;
  double total_seconds = 0;
  bool stale = false;
};

// What tells one stored fit from another without reading its matrices: a key for the
// daemon's response cache. A refit replaces the row, and its fitted_at and measured
// total_seconds (and, after a correction, input_hash) differ from the old row's.
struct WindowStamp {
  std::string as_of;
  long long row_id = 0;
  std::string fitted_at;
  std::string input_hash;
  double total_seconds = 0;
  bool stale = false;

  std::string key() const;  // all of the above in one string
};

// Inserts or replaces the window (model version, as-of) in its own transaction.
void save_window(Database& db, long model_version_id, const WindowRecord& window);

std::vector<WindowSummary> list_windows(Database& db, long model_version_id);

// How many windows a model version has, how many are stale, and the latest as-of date
// ("" when none): one aggregate query, no statistics parsed.
struct WindowCounts {
  std::size_t windows = 0;
  std::size_t stale = 0;
  std::string latest_as_of;
};
WindowCounts count_windows(Database& db, long model_version_id);

// The window with this as-of date, or with `at_or_before` the latest one at or before it;
// as_of "" means the latest window. nullopt when there is none.
std::optional<WindowRecord> read_window(Database& db, long model_version_id, const std::string& as_of,
                                        bool at_or_before = true);

// The stamp of the window read_window would return, from one indexed row, no BLOBs.
// Throws std::invalid_argument for a malformed as-of date.
std::optional<WindowStamp> find_window_stamp(Database& db, long model_version_id, const std::string& as_of,
                                             bool at_or_before = true);

}  // namespace factorwatch::storage
