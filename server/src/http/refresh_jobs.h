// Refreshes started over HTTP run here, one at a time, on a thread of their own with its
// own database connection, while the request threads go on answering (SQLite WAL:
// readers never wait for the writer). Jobs are kept in memory for the daemon's lifetime.
//
// The refresh thread runs at a lower CPU priority (nice +10, inherited by the engine's
// OpenMP threads) so that queries stay fast while a backfill uses every core.
#pragma once

#include <atomic>
#include <condition_variable>
#include <deque>
#include <map>
#include <mutex>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <thread>

#include "factorwatch/pipeline/refresh.h"

namespace factorwatch::server {

class RefreshJobs {
 public:
  explicit RefreshJobs(std::string database_path);
  ~RefreshJobs();  // stop()
  RefreshJobs(const RefreshJobs&) = delete;
  RefreshJobs& operator=(const RefreshJobs&) = delete;

  struct Submitted {
    long id;
    bool created;  // false: the model already had a queued or running refresh
  };
  Submitted submit(const std::string& model);

  // The id of the model's queued or running refresh, if it has one (a delete, prune or
  // rename waits for it rather than pulling the model from under it).
  std::optional<long> active_job(const std::string& model) const;

  std::optional<nlohmann::ordered_json> job_json(long id) const;
  nlohmann::ordered_json jobs_json() const;

  // The running refresh ends after the window being fitted is written; queued jobs are
  // marked stopped; the thread is joined. Safe to call twice.
  void stop();

 private:
  enum class State { queued, running, finished, failed, stopped };
  struct Job {
    long id = 0;
    std::string model;
    State state = State::queued;
    std::string submitted_at, started_at, finished_at;
    pipeline::RefreshProgress progress;
    std::optional<pipeline::RefreshSummary> summary;
    std::string error;
  };
  static const char* state_name(State s);
  static nlohmann::ordered_json to_json(const Job& job);
  void run();

  std::string database_path_;
  mutable std::mutex mutex_;
  std::condition_variable wake_;
  std::map<long, Job> jobs_;
  std::deque<long> queue_;
  long next_id_ = 1;
  bool stopping_ = false;
  std::atomic<bool> stop_refresh_{false};
  std::thread worker_;
};

}  // namespace factorwatch::server
