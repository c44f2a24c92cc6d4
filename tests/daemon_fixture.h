// The real `factorwatch serve` as a child process on a free loopback port, and curl as
// the HTTP client: what the daemon integration tests drive.
#pragma once

#include <signal.h>
#include <sys/wait.h>
#include <unistd.h>

#include <atomic>
#include <chrono>
#include <cstdio>
#include <map>
#include <string>
#include <thread>
#include <vector>

#include "storage_fixtures.h"

namespace factorwatch::testing {

struct HttpResult {
  int status = 0;  // 0: no answer
  std::map<std::string, std::string> headers;  // names in lower case
  std::string body;

  std::string header(const std::string& lower_case_name) const {
    const auto it = headers.find(lower_case_name);
    return it == headers.end() ? std::string() : it->second;
  }
};

// Runs curl with `arguments` (already shell-quoted) against `url`; status, headers, body.
inline HttpResult curl(const std::string& scratch_dir, const std::string& arguments, const std::string& url) {
  static std::atomic<int> counter{0};
  const std::string stem = scratch_dir + "/.curl" + std::to_string(::getpid()) + "-" + std::to_string(counter++);
  const std::string command = "curl -s -S -o '" + stem + ".body' -D '" + stem + ".head' -w '%{http_code}' " +
                              arguments + " '" + url + "' 2>/dev/null";
  HttpResult r;
  FILE* pipe = ::popen(command.c_str(), "r");
  if (!pipe) return r;
  char code[16] = {};
  const std::size_t n = std::fread(code, 1, sizeof code - 1, pipe);
  ::pclose(pipe);
  r.status = std::atoi(std::string(code, n).c_str());
  r.body = read_bytes(stem + ".body");
  std::string head = read_bytes(stem + ".head");
  std::size_t start = 0;
  while (start < head.size()) {
    std::size_t end = head.find("\r\n", start);
    if (end == std::string::npos) end = head.size();
    const std::string line = head.substr(start, end - start);
    if (const auto colon = line.find(':'); colon != std::string::npos) {
      std::string name = line.substr(0, colon);
      for (char& c : name) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
      r.headers[name] = line.substr(line.find_first_not_of(' ', colon + 1));
    }
    start = end + 2;
  }
  std::remove((stem + ".body").c_str());
  std::remove((stem + ".head").c_str());
  return r;
}

// `factorwatch --data DIR serve --port 0 EXTRA`, started in the constructor and stopped
// with SIGTERM in stop() or the destructor. The port is read from the daemon's
// "listening on http://127.0.0.1:PORT" line; ready() waits for GET /v1/health = 200.
class DaemonProcess {
 public:
  DaemonProcess(const std::string& data_dir, const std::string& extra = "") : data_dir_(data_dir) {
    log_path_ = data_dir + "/.daemon-log";
    out_path_ = data_dir + "/.daemon-out";
    // A daemon started earlier on the same directory left its banner here; its port must
    // not be mistaken for this one's.
    std::remove(out_path_.c_str());
    std::remove(log_path_.c_str());
    pid_ = ::fork();
    if (pid_ == 0) {
      const std::string command = "exec " + factorwatch_command() + " --data '" + data_dir +
                                  "' serve --port 0 " + extra + " >'" + out_path_ + "' 2>'" + log_path_ + "'";
      ::execl("/bin/sh", "sh", "-c", command.c_str(), static_cast<char*>(nullptr));
      ::_exit(127);
    }
    const auto deadline = std::chrono::steady_clock::now() + std::chrono::seconds(20);
    while (std::chrono::steady_clock::now() < deadline && port_ == 0) {
      const std::string out = read_bytes(out_path_);
      const std::string marker = "listening on http://127.0.0.1:";
      if (const auto at = out.find(marker); at != std::string::npos)
        port_ = std::atoi(out.c_str() + at + marker.size());
      else
        std::this_thread::sleep_for(std::chrono::milliseconds(20));
    }
  }
  ~DaemonProcess() { stop(); }

  int port() const { return port_; }
  // The daemon's process id (the shell execs the command, so it is the daemon itself).
  pid_t pid() const { return pid_; }
  std::string url(const std::string& path) const { return "http://127.0.0.1:" + std::to_string(port_) + path; }

  bool ready() const {
    const auto deadline = std::chrono::steady_clock::now() + std::chrono::seconds(20);
    while (std::chrono::steady_clock::now() < deadline) {
      if (port_ != 0 && curl(data_dir_, "", url("/v1/health")).status == 200) return true;
      std::this_thread::sleep_for(std::chrono::milliseconds(50));
    }
    return false;
  }

  // SIGTERM and wait (up to `seconds`); the exit code, or -1 when it had to be killed.
  int stop(int seconds = 60) {
    if (pid_ <= 0) return exit_code_;
    ::kill(pid_, SIGTERM);
    const auto deadline = std::chrono::steady_clock::now() + std::chrono::seconds(seconds);
    int status = 0;
    while (::waitpid(pid_, &status, WNOHANG) == 0) {
      if (std::chrono::steady_clock::now() > deadline) {
        ::kill(pid_, SIGKILL);
        ::waitpid(pid_, &status, 0);
        pid_ = -1;
        return exit_code_ = -1;
      }
      std::this_thread::sleep_for(std::chrono::milliseconds(20));
    }
    pid_ = -1;
    return exit_code_ = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  }

  std::string log() const { return read_bytes(log_path_); }
  std::string banner() const { return read_bytes(out_path_); }

 private:
  std::string data_dir_, log_path_, out_path_;
  pid_t pid_ = -1;
  int port_ = 0;
  int exit_code_ = -1;
};

}  // namespace factorwatch::testing
