// The daemon's front door: every accepted connection waits here, in one thread, until
// the whole head of its next request has arrived; only then does a worker thread take
// it. So a client that sends its head slowly, or never, holds no worker (a worker per
// connection was what let 64 slow clients stall the daemon), a head that breaks a limit
// is refused while it is still arriving (nothing is buffered past the limit), and the
// number of open connections is capped.
//
// No HTTP library here: the gate moves bytes and file descriptors; what a worker does
// with a connection (http_daemon.cpp) is its own business.
#pragma once

#include <atomic>
#include <chrono>
#include <condition_variable>
#include <cstddef>
#include <deque>
#include <functional>
#include <memory>
#include <mutex>
#include <string>
#include <thread>
#include <unordered_map>
#include <vector>

#include "request_head.h"

namespace factorwatch::server {

using GateClock = std::chrono::steady_clock;

// The address at either end of a connected socket (`local`: ours): host as text (IPv6
// without brackets) and port; false when unknown.
bool socket_address(int fd, bool local, std::string& host, int& port);

// One client connection. Owned by the gate while it waits and by one worker while a
// request is served; closing happens in the destructor.
class Connection {
 public:
  Connection(int fd, std::atomic<std::size_t>* open_count);
  ~Connection();
  Connection(const Connection&) = delete;
  Connection& operator=(const Connection&) = delete;

  int fd() const { return fd_; }
  const std::string& peer() const { return peer_; }  // "127.0.0.1:50312", for log lines

  // Bytes received and not yet handed to the HTTP parser: the head the gate collected,
  // and whatever followed it in the same reads.
  std::string received;
  std::size_t requests_served = 0;
  GateClock::time_point deadline;     // while waiting in the gate
  bool idle = false;                  // waiting for the next request on a kept-alive connection
  bool draining = false;              // answered with an error; reading and discarding until closed

 private:
  int fd_;
  std::string peer_;
  std::atomic<std::size_t>* open_count_;
};

struct GateLimits {
  HeadLimits head;
  // Open connections at once (waiting and being served). Beyond it the gate first
  // closes the connection that has waited longest without completing a head, and only
  // if every connection is busy refuses the newcomer with a 503.
  std::size_t max_connections = 256;
  // From a connection's first byte (or its arrival) to the blank line ending the head.
  std::chrono::milliseconds head_deadline{10000};
  // A kept-alive connection waiting for its next request.
  std::chrono::milliseconds idle_deadline{2000};
  // After an error answer: how long unread input is discarded before the close, so the
  // client reads the answer instead of a connection reset.
  std::chrono::milliseconds drain_deadline{1000};
  int workers = 64;
};

class ConnectionGate {
 public:
  // Runs on a worker thread with a connection whose `received` begins with a complete
  // head. It either hands the connection back with park() or lets it close.
  using Serve = std::function<void(std::unique_ptr<Connection>)>;
  // The whole HTTP response (status line, fields, problem body) for a refusal.
  using Refusal = std::function<std::string(int status, const std::string& detail, const std::string& field)>;
  using Log = std::function<void(const std::string& line)>;

  ConnectionGate(GateLimits limits, Serve serve, Refusal refusal, Log log);
  ~ConnectionGate();

  void start();
  // Takes ownership of an accepted socket.
  void admit(int fd);
  // A kept-alive connection waits for its next request.
  void park(std::unique_ptr<Connection> connection);
  // The connection was answered with an error before its request was read: stop
  // writing, discard what the client still sends for a moment, then close.
  void drain(std::unique_ptr<Connection> connection);
  // Closes every waiting connection, lets workers finish the request they serve, joins.
  void stop();

  bool stopping() const { return stopping_.load(); }
  std::size_t open_connections() const { return open_.load(); }
  const GateLimits& limits() const { return limits_; }

 private:
  void post(std::unique_ptr<Connection> connection);
  void wake();
  void wait_loop();
  void work_loop();
  void take_inbox();
  void watch(std::unique_ptr<Connection> connection);
  void on_readable(int fd);
  void refuse(std::unique_ptr<Connection> connection, int status, const std::string& detail, const std::string& field);
  void dispatch(std::unique_ptr<Connection> connection);
  void forget(int fd);
  bool evict_one();
  void expire(GateClock::time_point now);

  GateLimits limits_;
  Serve serve_;
  Refusal refusal_;
  Log log_;

  std::atomic<bool> stopping_{false};
  std::atomic<std::size_t> open_{0};
  int epoll_fd_ = -1;
  int wake_fd_ = -1;  // eventfd: new or parked connections are in the inbox

  std::mutex inbox_mutex_;
  std::vector<std::unique_ptr<Connection>> inbox_;

  // Owned by the wait thread only.
  std::unordered_map<int, std::unique_ptr<Connection>> waiting_;

  std::mutex work_mutex_;
  std::condition_variable work_ready_;
  std::deque<std::unique_ptr<Connection>> work_;

  std::thread waiter_;
  std::vector<std::thread> workers_;
};

}  // namespace factorwatch::server
