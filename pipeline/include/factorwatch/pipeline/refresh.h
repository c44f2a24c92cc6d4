// The rolling refresh: fit every window of a model that is not stored yet, or is stale,
// up to the latest stored date.
//
// The calendar: a model's windows count only its own dates, the stored dates on which at
// least half as many of its universe assets have a return as on the busiest of that date
// and the 20 stored dates before it (pipeline/src/model_calendar.h); a model of one
// market thus skips the dates only other markets traded. The dates a window skipped
// between its first and its as-of date are stored with it.
//
// The grid: the model's window length W and step s lay a grid on the model's dates
// d_0 < d_1 < ... : before a model version has a window, window j ends on d_(W-1+js)
// (its as-of date) and holds the W dates up to it; a model's first_as_of skips the grid
// points before it. On the first run this is a backfill; on a normal night, one new
// window. Once the version has windows, the grid is anchored at its earliest window: the
// grid points are that date and every s-th stored date after it. New dates therefore
// never move it, and neither does older history loaded later: no window is fitted before
// the first one, so the model's first window, its pinned window (by default the first),
// its alignments and its drift stay as they were. To fit windows on the older history,
// define a new version with an earlier first_as_of.
//
// A load may commit while a refresh runs. A window is marked current only for the
// returns it was fitted on: its write compares, in the same transaction, the stored
// rows of its dates (their checksums) with the rows the refresh read, and stores it
// stale when a load changed them in between (save_window); a load committing after the
// write marks it stale itself. A load that inserts dates inside the range being fitted
// makes the refresh plan its grid again from the stored dates.
//
// Each window is warm-started from the window before it on the grid (when that fit is
// usable) and written in its own transaction: a refresh killed at any point leaves only
// whole windows, and the next refresh carries on from them. A resumed run warm-starts
// from the stored window, which holds the very numbers the uninterrupted run would have
// used, so both give the same windows.
//
// Each window is rotated by the model's rotation when it is fitted (the matrix T is
// stored with it). A second pass then aligns every window that needs it onto its
// reference (the previous window, a pinned window or a smoothed reference; orthogonal
// Procrustes on the shared assets) and stores its drift against the previous and the
// pinned window, with alerts. The fit itself is stored as the engine returned it; what
// every surface serves is that fit times T and the alignment R (served_windows.h).
#pragma once

#include <atomic>
#include <cstddef>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "factorwatch/storage/database.h"
#include "factorwatch/storage/models.h"

namespace factorwatch::pipeline {

struct RefreshProgress {
  std::size_t done = 0;   // windows written so far in this run
  std::size_t total = 0;  // windows this run will write
  std::optional<engine::Date> as_of;  // of the window just written; none before the first
  double elapsed_seconds = 0;
};

struct RefreshSummary {
  std::string model;
  int version = 0;
  std::size_t grid_windows = 0;     // windows the stored dates allow
  std::size_t already_current = 0;  // stored and not stale: left alone
  std::size_t fitted = 0;           // written in this run (new or refitted)
  std::size_t refitted_stale = 0;   // of which were stale
  std::size_t unusable = 0;         // of which have no usable fit (stored, flagged)
  std::string unusable_reason;      // why the first of them has none (its fit's message)
  bool unusable_reasons_differ = false;  // another of them has another reason
  std::size_t changed_during = 0;   // of which a load changed the returns of before they were
                                    // written: stored stale, so the next refresh refits them
  std::optional<engine::Date> first_as_of, last_as_of;  // of the windows written in this run
  double seconds = 0;
  // Reading: the stored returns, each window cut from them and its input fingerprint.
  double read_seconds = 0, fit_seconds = 0, write_seconds = 0;
  // The second pass: windows aligned onto their reference and compared (drift), the
  // alerts that raised, and its time (reading the windows included).
  std::size_t aligned = 0;
  std::size_t alerts = 0;
  double align_seconds = 0;
  std::string note;  // e.g. why there is nothing to fit
  bool stopped = false;  // asked to stop: the windows written so far are whole and kept
};

using RefreshCallback = std::function<void(const RefreshProgress&)>;

// Throws std::invalid_argument when the model does not exist. When `stop` is given and
// becomes true, the run ends after the window being fitted is written (a daemon shutting
// down); the next refresh carries on from the windows stored.
RefreshSummary refresh_model(storage::Database& db, const std::string& model, const RefreshCallback& progress = {},
                             const std::atomic<bool>* stop = nullptr);

// The as-of dates refresh_model would fit now, ascending.
std::vector<engine::Date> pending_windows(storage::Database& db, const storage::ModelVersion& model);

}  // namespace factorwatch::pipeline
