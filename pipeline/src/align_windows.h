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
#include <cstdint>
#include <map>
#include <optional>

#include "factorwatch/storage/database.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/windows.h"

namespace factorwatch::pipeline::detail {

using storage::Database;
using storage::ModelVersion;
using storage::WindowRecord;


struct AlignmentRun {
  std::size_t aligned = 0;  // windows whose alignment and drift were written
  std::size_t alerts = 0;   // alerts raised on them
  double seconds = 0;
  bool stopped = false;     // asked to stop: the windows written are whole; the rest wait
};

// The windows the first pass just fitted and stored, as fitted (rotation included), so the
// second pass need not read them back: the stored numbers are these, bit for bit (BLOBs
// hold the doubles, JSON round-trips them). Bounded in memory; what does not fit is read.
class FittedWindows {
 public:
  void keep(engine::Date as_of, const WindowRecord& record);
  std::optional<WindowRecord> take(engine::Date as_of);  // nullopt when not kept

 private:
  static constexpr std::size_t kMaxBytes = std::size_t{512} << 20;
  std::size_t bytes_ = 0;
  std::map<engine::Date, WindowRecord> records_;
};

AlignmentRun align_windows(Database& db, const ModelVersion& model, const std::atomic<bool>* stop,
                           FittedWindows* fitted = nullptr);

}  // namespace factorwatch::pipeline::detail
