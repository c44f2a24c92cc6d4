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

// Inserts or replaces the window (model version, as-of) in its own transaction.
void save_window(Database& db, long model_version_id, const WindowRecord& window);

std::vector<WindowSummary> list_windows(Database& db, long model_version_id);

// The window with this as-of date, or with `at_or_before` the latest one at or before it;
// as_of "" means the latest window. nullopt when there is none.
std::optional<WindowRecord> read_window(Database& db, long model_version_id, const std::string& as_of,
                                        bool at_or_before = true);

}  // namespace factorwatch::storage
