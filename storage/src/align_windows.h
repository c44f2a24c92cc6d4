// The refresh's second pass: align every window of a model version onto its reference and
// store the drift against the previous and the pinned window, with the alerts the model's
// thresholds raise.
//
// Which windows: from the first one without an alignment (new, refitted, or stored before
// alignment existed) to the last, because a chained or smoothed reference carries every
// change forward; everything when the pinned window itself is among them. Each window is
// read as fitted, rotated by its stored T, aligned (orthogonal Procrustes on the shared
// assets, standardized loadings) and compared; no window is refitted.
#pragma once

#include <atomic>
#include <cstddef>

#include "factorwatch/storage/database.h"
#include "factorwatch/storage/models.h"

namespace factorwatch::storage::detail {

struct AlignmentRun {
  std::size_t aligned = 0;  // windows whose alignment and drift were written
  std::size_t alerts = 0;   // alerts raised on them
  double seconds = 0;
  bool stopped = false;     // asked to stop: the windows written are whole; the rest wait
};

AlignmentRun align_windows(Database& db, const ModelVersion& model, const std::atomic<bool>* stop);

}  // namespace factorwatch::storage::detail
