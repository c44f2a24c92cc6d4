// Windows made ready for risk queries, kept by the daemon between requests under the
// window's stamp (storage::WindowStamp), so that a refit or a realignment is never used
// stale. Reading a 5,000-asset window and indexing its assets takes about 1 ms; the
// engine's part of a 2,000-name query on a cached one about 0.15 ms (docs/performance.md,
// "Risk queries", where rendering the answer is measured too).
#pragma once

#include <cstddef>
#include <list>
#include <memory>
#include <mutex>
#include <string>
#include <utility>

#include "factorwatch/pipeline/risk_query.h"

namespace factorwatch::server {

// The daemon keeps this many windows (about 0.5 MB each at 5,000 assets and 10 factors):
// the latest of a few models, and a window or two someone looks back at.
inline constexpr std::size_t kRiskModelWindows = 8;

class RiskModelCache {
 public:
  explicit RiskModelCache(std::size_t windows) : capacity_(windows) {}
  std::shared_ptr<const pipeline::WindowRiskModel> find(const std::string& key);
  void put(const std::string& key, std::shared_ptr<const pipeline::WindowRiskModel> model);

 private:
  using Entry = std::pair<std::string, std::shared_ptr<const pipeline::WindowRiskModel>>;
  std::mutex mutex_;
  std::size_t capacity_;
  std::list<Entry> order_;  // most recently used first; a handful of windows, searched in order
};

}  // namespace factorwatch::server
