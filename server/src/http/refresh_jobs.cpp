#include "refresh_jobs.h"

#include <sys/resource.h>
#include <sys/syscall.h>
#include <unistd.h>

#include <memory>

#include "factorwatch/storage/database.h"
#include "factorwatch/storage/timestamps.h"

namespace factorwatch::server {
namespace {

nlohmann::ordered_json text_or_null(const std::string& s) {
  return s.empty() ? nlohmann::ordered_json() : nlohmann::ordered_json(s);
}

}  // namespace

RefreshJobs::RefreshJobs(std::string database_path) : database_path_(std::move(database_path)) {
  worker_ = std::thread([this] { run(); });
}

RefreshJobs::~RefreshJobs() { stop(); }

const char* RefreshJobs::state_name(State s) {
  switch (s) {
    case State::queued: return "queued";
    case State::running: return "running";
    case State::finished: return "finished";
    case State::failed: return "failed";
    case State::stopped: return "stopped";
  }
  return "unknown";
}

std::optional<long> RefreshJobs::active_job(const std::string& model) const {
  std::lock_guard<std::mutex> lock(mutex_);
  for (const auto& [id, job] : jobs_)
    if (job.model == model && (job.state == State::queued || job.state == State::running)) return id;
  return std::nullopt;
}

RefreshJobs::Submitted RefreshJobs::submit(const std::string& model) {
  std::lock_guard<std::mutex> lock(mutex_);
  for (const auto& [id, job] : jobs_)
    if (job.model == model && (job.state == State::queued || job.state == State::running)) return {id, false};
  Job job;
  job.id = next_id_++;
  job.model = model;
  job.submitted_at = storage::utc_timestamp();
  if (stopping_) {
    job.state = State::stopped;
    job.error = "the daemon is shutting down";
    job.finished_at = job.submitted_at;
  } else {
    queue_.push_back(job.id);
  }
  const long id = job.id;
  jobs_.emplace(id, std::move(job));
  wake_.notify_one();
  return {id, true};
}

nlohmann::ordered_json RefreshJobs::to_json(const Job& job) {
  nlohmann::ordered_json j;
  j["id"] = job.id;
  j["kind"] = "refresh";
  j["model"] = job.model;
  j["state"] = state_name(job.state);
  j["submitted_at"] = job.submitted_at;
  j["started_at"] = text_or_null(job.started_at);
  j["finished_at"] = text_or_null(job.finished_at);
  j["progress"] = {{"done", job.progress.done},
                   {"total", job.progress.total},
                   {"as_of", job.progress.as_of},
                   {"elapsed_seconds", job.progress.elapsed_seconds}};
  if (job.summary) {
    const pipeline::RefreshSummary& s = *job.summary;
    j["summary"] = {{"version", s.version},
                    {"grid_windows", s.grid_windows},
                    {"already_current", s.already_current},
                    {"fitted", s.fitted},
                    {"refitted_stale", s.refitted_stale},
                    {"unusable", s.unusable},
                    {"unusable_reason", text_or_null(s.unusable_reason)},
                    {"first_as_of", s.first_as_of},
                    {"last_as_of", s.last_as_of},
                    {"seconds", s.seconds},
                    {"read_seconds", s.read_seconds},
                    {"fit_seconds", s.fit_seconds},
                    {"write_seconds", s.write_seconds},
                    {"aligned", s.aligned},
                    {"alerts", s.alerts},
                    {"align_seconds", s.align_seconds},
                    {"note", text_or_null(s.note)}};
  } else {
    j["summary"] = nullptr;
  }
  j["error"] = text_or_null(job.error);
  return j;
}

std::optional<nlohmann::ordered_json> RefreshJobs::job_json(long id) const {
  std::lock_guard<std::mutex> lock(mutex_);
  const auto it = jobs_.find(id);
  if (it == jobs_.end()) return std::nullopt;
  return to_json(it->second);
}

nlohmann::ordered_json RefreshJobs::jobs_json() const {
  std::lock_guard<std::mutex> lock(mutex_);
  nlohmann::ordered_json list = nlohmann::ordered_json::array();
  for (const auto& [id, job] : jobs_) list.push_back(to_json(job));
  return {{"jobs", std::move(list)}};
}

void RefreshJobs::stop() {
  {
    std::lock_guard<std::mutex> lock(mutex_);
    stopping_ = true;
    for (long id : queue_) {
      Job& job = jobs_.at(id);
      job.state = State::stopped;
      job.error = "the daemon shut down before this refresh started";
      job.finished_at = storage::utc_timestamp();
    }
    queue_.clear();
  }
  stop_refresh_ = true;
  wake_.notify_all();
  if (worker_.joinable()) worker_.join();
}

void RefreshJobs::run() {
  // Linux keeps a nice value per thread; threads this one starts (OpenMP) inherit it.
  setpriority(PRIO_PROCESS, static_cast<id_t>(::syscall(SYS_gettid)), 10);
  std::unique_ptr<storage::Database> db;
  for (;;) {
    long id = 0;
    std::string model;
    {
      std::unique_lock<std::mutex> lock(mutex_);
      wake_.wait(lock, [this] { return stopping_ || !queue_.empty(); });
      if (stopping_) return;
      id = queue_.front();
      queue_.pop_front();
      Job& job = jobs_.at(id);
      job.state = State::running;
      job.started_at = storage::utc_timestamp();
      model = job.model;
    }
    State outcome = State::finished;
    std::optional<pipeline::RefreshSummary> summary;
    std::string error;
    try {
      if (!db) db = std::make_unique<storage::Database>(database_path_);
      summary = pipeline::refresh_model(
          *db, model,
          [this, id](const pipeline::RefreshProgress& p) {
            std::lock_guard<std::mutex> lock(mutex_);
            jobs_.at(id).progress = p;
          },
          &stop_refresh_);
      if (summary->stopped) outcome = State::stopped;
      else if (summary->unusable > 0) {
        outcome = State::failed;
        error = std::to_string(summary->unusable) + " window(s) have no usable fit (stored and flagged)" +
                (summary->unusable_reason.empty() ? "" : (summary->unusable_reasons_differ ? "; the first: " : ": ") + summary->unusable_reason);
      }
    } catch (const std::exception& e) {
      outcome = State::failed;
      error = e.what();
    }
    std::lock_guard<std::mutex> lock(mutex_);
    Job& job = jobs_.at(id);
    job.state = outcome;
    job.summary = std::move(summary);
    job.error = error;
    job.finished_at = storage::utc_timestamp();
  }
}

}  // namespace factorwatch::server
