// The rows the refresh's second pass writes: each window's alignment onto its reference,
// its drift against the previous and the pinned window, and the alerts raised. Plain
// reads and writes; which windows are aligned, onto what, and which congruence raises an
// alert is the pipeline's policy (pipeline/src/align_windows.cpp). Callers group many
// writes in one WriteBatch (database.h).
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "factorwatch/storage/database.h"
#include "factorwatch/storage/drift.h"
#include "factorwatch/storage/windows.h"

namespace factorwatch::storage {

// A stored window of a model version and whether it has an alignment row yet.
struct AlignmentState {
  long long window_id = 0;
  engine::Date as_of;
  bool usable = false;
  bool aligned = false;
};

// Every window of the model version, ascending by as-of date.
std::vector<AlignmentState> alignment_states(Database& db, long model_version_id);

// Inserts or replaces the window's alignment row. no `reference_as_of` is stored as NULL;
// aligned_at is the time of this write (the field in `alignment` is not read).
void save_alignment(Database& db, long long window_id, const WindowAlignment& alignment);

// Removes the window's alignment row (its comparisons must be redone).
void forget_alignment(Database& db, long long window_id);

// Removes the window's drift rows and alerts against "previous" or "pinned", or both
// when `against` is "".
void forget_drift(Database& db, long long window_id, const std::string& against = "");

// Inserts or replaces the window's comparison `drift.against` (its as_of is not read:
// the window is `window_id`). movers[j] may hold at most kMoversKept assets.
void save_drift(Database& db, long long window_id, const DriftRecord& drift);

// Inserts or replaces an alert on factor `alert.factor` (1-based) of the window's
// comparison `alert.against`. A NaN congruence (a factor that vanished) is kept as such.
void save_alert(Database& db, long long window_id, const DriftAlert& alert);

}  // namespace factorwatch::storage
