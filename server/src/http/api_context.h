// What every endpoint handler may use: the database (one connection per request thread),
// the refresh jobs, the response cache, the windows ready for risk queries and the
// daemon's limits.
#pragma once

#include <atomic>
#include <cstddef>
#include <string>

#include "factorwatch/storage/database.h"
#include "refresh_jobs.h"
#include "response_cache.h"
#include "risk_model_cache.h"

namespace factorwatch::server {

// The daemon's life: 503 for everything but health and version until ready.
enum class DaemonState { starting, ready, stopping };

struct ApiContext {
  std::string data_dir;
  std::string database_path;
  std::size_t max_upload_bytes = 0;
  RefreshJobs* jobs = nullptr;
  ResponseCache* cache = nullptr;
  RiskModelCache* risk_models = nullptr;  // windows ready for risk queries
  const std::atomic<DaemonState>* state = nullptr;
  bool reads_need_token = false;

  // This thread's connection, opened on first use. SQLite connections are not shared
  // between threads; the daemon's worker threads are few and long-lived.
  storage::Database& database() const;
};

}  // namespace factorwatch::server
