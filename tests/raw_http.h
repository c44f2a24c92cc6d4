// A raw TCP client for the daemon's hardening tests: sends exactly the bytes given
// (malformed heads, partial requests, bodies that never come) where curl would correct
// or refuse them, and reads whatever comes back.
#pragma once

#include <arpa/inet.h>
#include <netinet/in.h>
#include <poll.h>
#include <sys/socket.h>
#include <unistd.h>

#include <chrono>
#include <cstdlib>
#include <fstream>
#include <string>

namespace factorwatch::testing {

// A connected socket to 127.0.0.1:port, or -1.
inline int connect_loopback(int port) {
  const int fd = ::socket(AF_INET, SOCK_STREAM | SOCK_CLOEXEC, 0);
  if (fd < 0) return -1;
  sockaddr_in address{};
  address.sin_family = AF_INET;
  address.sin_port = htons(static_cast<uint16_t>(port));
  address.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
  if (::connect(fd, reinterpret_cast<sockaddr*>(&address), sizeof address) != 0) {
    ::close(fd);
    return -1;
  }
  return fd;
}

// Sends all of `bytes` (stops quietly when the peer closes).
inline bool send_all(int fd, const std::string& bytes) {
  std::size_t sent = 0;
  while (sent < bytes.size()) {
    const ssize_t n = ::send(fd, bytes.data() + sent, bytes.size() - sent, MSG_NOSIGNAL);
    if (n <= 0) return false;
    sent += static_cast<std::size_t>(n);
  }
  return true;
}

// Reads until the peer closes or `seconds` pass; what arrived.
inline std::string read_until_close(int fd, double seconds) {
  std::string out;
  const auto deadline = std::chrono::steady_clock::now() + std::chrono::duration<double>(seconds);
  char buffer[65536];
  for (;;) {
    const auto left = std::chrono::duration_cast<std::chrono::milliseconds>(deadline - std::chrono::steady_clock::now());
    if (left.count() <= 0) break;
    pollfd p{fd, POLLIN, 0};
    if (::poll(&p, 1, static_cast<int>(left.count())) <= 0) break;
    const ssize_t n = ::recv(fd, buffer, sizeof buffer, 0);
    if (n <= 0) break;
    out.append(buffer, static_cast<std::size_t>(n));
  }
  return out;
}

// One exchange on a new connection: the response bytes (empty when none came).
inline std::string exchange(int port, const std::string& request, double seconds = 5) {
  const int fd = connect_loopback(port);
  if (fd < 0) return "";
  send_all(fd, request);
  std::string response = read_until_close(fd, seconds);
  ::close(fd);
  return response;
}

// The status code of a raw response ("HTTP/1.1 404 Not Found..." -> 404), 0 if none.
inline int status_of(const std::string& response) {
  if (response.rfind("HTTP/1.", 0) != 0 || response.size() < 12) return 0;
  return std::atoi(response.c_str() + 9);
}

// The body of a raw response (after the blank line).
inline std::string body_of(const std::string& response) {
  const auto end = response.find("\r\n\r\n");
  return end == std::string::npos ? std::string() : response.substr(end + 4);
}

// A process's peak resident memory (VmHWM), KiB; 0 when unknown.
inline long peak_memory_kib(pid_t pid) {
  std::ifstream status("/proc/" + std::to_string(pid) + "/status");
  std::string line;
  while (std::getline(status, line))
    if (line.rfind("VmHWM:", 0) == 0) return std::atol(line.c_str() + 6);
  return 0;
}

}  // namespace factorwatch::testing
