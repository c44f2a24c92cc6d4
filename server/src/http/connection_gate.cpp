#include "connection_gate.h"

#include <arpa/inet.h>
#include <fcntl.h>
#include <netinet/in.h>
#include <sys/epoll.h>
#include <sys/eventfd.h>
#include <sys/socket.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <stdexcept>

namespace factorwatch::server {
namespace {

std::string peer_text(int fd) {
  std::string host;
  int port = -1;
  if (!socket_address(fd, false, host, port)) return "unknown peer";
  return (host.find(':') != std::string::npos ? "[" + host + "]" : host) + ":" + std::to_string(port);
}

// Reads at most this much per readiness event, so one fast client cannot keep the wait
// thread from the others, and the gate never holds more than a head and one chunk.
constexpr std::size_t kReadChunk = 16 << 10;

}  // namespace

bool socket_address(int fd, bool local, std::string& host, int& port) {
  sockaddr_storage address{};
  socklen_t length = sizeof address;
  host.clear();
  port = -1;
  const int rc = local ? ::getsockname(fd, reinterpret_cast<sockaddr*>(&address), &length)
                       : ::getpeername(fd, reinterpret_cast<sockaddr*>(&address), &length);
  if (rc != 0) return false;
  char text[INET6_ADDRSTRLEN] = {};
  if (address.ss_family == AF_INET) {
    const auto* v4 = reinterpret_cast<const sockaddr_in*>(&address);
    ::inet_ntop(AF_INET, &v4->sin_addr, text, sizeof text);
    port = ntohs(v4->sin_port);
  } else if (address.ss_family == AF_INET6) {
    const auto* v6 = reinterpret_cast<const sockaddr_in6*>(&address);
    ::inet_ntop(AF_INET6, &v6->sin6_addr, text, sizeof text);
    port = ntohs(v6->sin6_port);
  } else {
    return false;
  }
  host = text;
  return true;
}

Connection::Connection(int fd, std::atomic<std::size_t>* open_count) : fd_(fd), open_count_(open_count) {
  ++*open_count_;
  peer_ = peer_text(fd);
  const int flags = ::fcntl(fd_, F_GETFL, 0);
  if (flags >= 0) ::fcntl(fd_, F_SETFL, flags | O_NONBLOCK);
}

Connection::~Connection() {
  if (fd_ >= 0) ::close(fd_);
  --*open_count_;
}

ConnectionGate::ConnectionGate(GateLimits limits, Serve serve, Refusal refusal, Log log)
    : limits_(std::move(limits)), serve_(std::move(serve)), refusal_(std::move(refusal)), log_(std::move(log)) {}

ConnectionGate::~ConnectionGate() {
  stop();
  if (epoll_fd_ >= 0) ::close(epoll_fd_);
  if (wake_fd_ >= 0) ::close(wake_fd_);
}

void ConnectionGate::start() {
  epoll_fd_ = ::epoll_create1(EPOLL_CLOEXEC);
  wake_fd_ = ::eventfd(0, EFD_CLOEXEC | EFD_NONBLOCK);
  if (epoll_fd_ < 0 || wake_fd_ < 0) throw std::runtime_error("cannot create the connection gate's event queue");
  epoll_event event{};
  event.events = EPOLLIN;
  event.data.fd = wake_fd_;
  ::epoll_ctl(epoll_fd_, EPOLL_CTL_ADD, wake_fd_, &event);
  waiter_ = std::thread([this] { wait_loop(); });
  for (int i = 0; i < limits_.workers; ++i) workers_.emplace_back([this] { work_loop(); });
}

// Hands a connection to the wait thread and wakes it.
void ConnectionGate::post(std::unique_ptr<Connection> connection) {
  {
    std::lock_guard<std::mutex> lock(inbox_mutex_);
    inbox_.push_back(std::move(connection));
  }
  wake();
}

void ConnectionGate::wake() {
  const std::uint64_t one = 1;
  [[maybe_unused]] const auto written = ::write(wake_fd_, &one, sizeof one);
}

void ConnectionGate::admit(int fd) {
  auto connection = std::make_unique<Connection>(fd, &open_);
  connection->deadline = GateClock::now() + limits_.head_deadline;
  if (stopping_) return;  // closed by the destructor
  post(std::move(connection));
}

void ConnectionGate::park(std::unique_ptr<Connection> connection) {
  if (stopping_) return;
  connection->idle = connection->received.empty();
  connection->deadline = GateClock::now() + (connection->idle ? limits_.idle_deadline : limits_.head_deadline);
  post(std::move(connection));
}

void ConnectionGate::drain(std::unique_ptr<Connection> connection) {
  ::shutdown(connection->fd(), SHUT_WR);
  connection->draining = true;
  connection->received.clear();
  connection->deadline = GateClock::now() + limits_.drain_deadline;
  if (stopping_) return;
  post(std::move(connection));
}

void ConnectionGate::stop() {
  if (stopping_.exchange(true)) {
    // Second call (the destructor after stop()): the threads are joined already.
  } else if (wake_fd_ >= 0) {
    wake();
  }
  work_ready_.notify_all();
  if (waiter_.joinable()) waiter_.join();
  for (auto& worker : workers_)
    if (worker.joinable()) worker.join();
  workers_.clear();
  std::lock_guard<std::mutex> lock(inbox_mutex_);
  inbox_.clear();
}

void ConnectionGate::watch(std::unique_ptr<Connection> connection) {
  const int fd = connection->fd();
  epoll_event event{};
  event.events = EPOLLIN | EPOLLRDHUP;
  event.data.fd = fd;
  if (::epoll_ctl(epoll_fd_, EPOLL_CTL_ADD, fd, &event) != 0) return;  // closed by the destructor
  waiting_[fd] = std::move(connection);
}

void ConnectionGate::forget(int fd) {
  ::epoll_ctl(epoll_fd_, EPOLL_CTL_DEL, fd, nullptr);
  waiting_.erase(fd);
}

void ConnectionGate::take_inbox() {
  std::vector<std::unique_ptr<Connection>> arrived;
  {
    std::lock_guard<std::mutex> lock(inbox_mutex_);
    arrived.swap(inbox_);
  }
  for (auto& connection : arrived) {
    if (!connection->draining && !connection->idle && connection->received.empty() &&
        open_.load() > limits_.max_connections && !evict_one()) {
      log_("refused connection from " + connection->peer() + ": 503, " + std::to_string(limits_.max_connections) +
           " connections are open and busy (factorwatch serve --max-connections)");
      refuse(std::move(connection), 503,
             "too many open connections (" + std::to_string(limits_.max_connections) + "); try again shortly", "");
      continue;
    }
    // A parked connection may already hold its next head (pipelined requests).
    if (!connection->draining && !connection->received.empty()) {
      const HeadCheck check = check_request_head(connection->received, limits_.head);
      if (check.state == HeadCheck::State::complete) {
        dispatch(std::move(connection));
        continue;
      }
      if (check.state == HeadCheck::State::refused) {
        log_("refused request from " + connection->peer() + ": " + std::to_string(check.status) + ", " + check.detail);
        refuse(std::move(connection), check.status, check.detail, check.field);
        continue;
      }
    }
    watch(std::move(connection));
  }
}

// At the cap, the connection that has waited longest without a complete head makes room:
// an idle kept-alive one first, then the slowest head.
bool ConnectionGate::evict_one() {
  int victim = -1;
  bool victim_idle = false;
  GateClock::time_point oldest{};
  for (const auto& [fd, connection] : waiting_) {
    if (connection->draining) continue;
    const bool better = victim < 0 || (connection->idle && !victim_idle) ||
                        (connection->idle == victim_idle && connection->deadline < oldest);
    if (better) {
      victim = fd;
      victim_idle = connection->idle;
      oldest = connection->deadline;
    }
  }
  if (victim < 0) return false;
  if (!victim_idle) log_("closed connection from " + waiting_[victim]->peer() + ": its head was the slowest when the connection cap was reached");
  forget(victim);
  return true;
}

void ConnectionGate::refuse(std::unique_ptr<Connection> connection, int status, const std::string& detail,
                            const std::string& field) {
  const std::string response = refusal_(status, detail, field);
  // A refusal is small and the socket's send buffer empty: one send delivers it; a
  // client that cannot take a kilobyte loses the answer, not the daemon a thread.
  [[maybe_unused]] const auto sent = ::send(connection->fd(), response.data(), response.size(), MSG_NOSIGNAL);
  ::shutdown(connection->fd(), SHUT_WR);
  connection->draining = true;
  connection->received.clear();
  connection->deadline = GateClock::now() + limits_.drain_deadline;
  watch(std::move(connection));
}

void ConnectionGate::dispatch(std::unique_ptr<Connection> connection) {
  {
    std::lock_guard<std::mutex> lock(work_mutex_);
    work_.push_back(std::move(connection));
  }
  work_ready_.notify_one();
}

void ConnectionGate::on_readable(int fd) {
  auto it = waiting_.find(fd);
  if (it == waiting_.end()) return;
  Connection& connection = *it->second;
  char chunk[kReadChunk];
  const ssize_t got = ::recv(fd, chunk, sizeof chunk, 0);
  if (got < 0 && (errno == EAGAIN || errno == EWOULDBLOCK || errno == EINTR)) return;
  if (got <= 0) {  // the client closed, or the connection broke
    forget(fd);
    return;
  }
  if (connection.draining) return;  // discarded
  if (connection.idle) {  // the first byte of the next request starts its head deadline
    connection.idle = false;
    connection.deadline = GateClock::now() + limits_.head_deadline;
  }
  connection.received.append(chunk, static_cast<std::size_t>(got));
  const HeadCheck check = check_request_head(connection.received, limits_.head);
  if (check.state == HeadCheck::State::incomplete) return;
  std::unique_ptr<Connection> taken = std::move(it->second);
  ::epoll_ctl(epoll_fd_, EPOLL_CTL_DEL, fd, nullptr);
  waiting_.erase(it);
  if (check.state == HeadCheck::State::complete) {
    dispatch(std::move(taken));
  } else {
    log_("refused request from " + taken->peer() + ": " + std::to_string(check.status) + ", " + check.detail);
    refuse(std::move(taken), check.status, check.detail, check.field);
  }
}

void ConnectionGate::expire(GateClock::time_point now) {
  std::vector<int> expired;
  for (const auto& [fd, connection] : waiting_)
    if (connection->deadline <= now) expired.push_back(fd);
  for (int fd : expired) {
    auto it = waiting_.find(fd);
    std::unique_ptr<Connection> connection = std::move(it->second);
    ::epoll_ctl(epoll_fd_, EPOLL_CTL_DEL, fd, nullptr);
    waiting_.erase(it);
    if (connection->draining || connection->idle || connection->received.empty()) continue;  // closed quietly
    log_("closed connection from " + connection->peer() + ": 408, the request head did not arrive within " +
         std::to_string(limits_.head_deadline.count()) + " ms");
    refuse(std::move(connection), 408,
           "the request head did not arrive within " + std::to_string(limits_.head_deadline.count() / 1000) +
               " s of its first byte",
           "");
  }
}

void ConnectionGate::wait_loop() {
  epoll_event events[64];
  while (!stopping_) {
    int timeout_ms = 250;
    const auto now = GateClock::now();
    for (const auto& [fd, connection] : waiting_) {
      const auto left = std::chrono::duration_cast<std::chrono::milliseconds>(connection->deadline - now).count();
      timeout_ms = static_cast<int>(std::max<long long>(0, std::min<long long>(timeout_ms, left + 1)));
    }
    const int n = ::epoll_wait(epoll_fd_, events, 64, timeout_ms);
    try {
      for (int i = 0; i < n; ++i) {
        if (events[i].data.fd == wake_fd_) {
          std::uint64_t count = 0;
          [[maybe_unused]] const auto got = ::read(wake_fd_, &count, sizeof count);
          continue;
        }
        on_readable(events[i].data.fd);
      }
      take_inbox();
      expire(GateClock::now());
    } catch (const std::exception& e) {
      log_(std::string("connection gate: ") + e.what());  // e.g. out of memory: the loop goes on
    }
  }
  for (auto& [fd, connection] : waiting_) ::epoll_ctl(epoll_fd_, EPOLL_CTL_DEL, fd, nullptr);
  waiting_.clear();
}

void ConnectionGate::work_loop() {
  for (;;) {
    std::unique_ptr<Connection> connection;
    {
      std::unique_lock<std::mutex> lock(work_mutex_);
      work_ready_.wait(lock, [this] { return stopping_.load() || !work_.empty(); });
      if (work_.empty()) return;  // stopping
      connection = std::move(work_.front());
      work_.pop_front();
    }
    if (stopping_) continue;  // closed unanswered: the daemon is going away
    try {
      serve_(std::move(connection));
    } catch (const std::exception& e) {
      // Nothing may end a worker (the daemon would abort): the connection is dropped.
      log_(std::string("dropped a connection after an error: ") + e.what());
    } catch (...) {
      log_("dropped a connection after an unknown error");
    }
  }
}

}  // namespace factorwatch::server
