// Who listens on a TCP port of this machine: what the daemon says when it cannot bind.
// Read from /proc/net/tcp and /proc/net/tcp6 (sockets in state LISTEN) and /proc/PID/fd
// (which process holds such a socket). Linux's /proc only; a process of another user
// cannot be looked into, so it is reported without a name.
#pragma once

#include <string>

namespace factorwatch::server {

struct PortHolder {
  bool listening = false;  // some socket of this machine listens on the port
  std::string address;     // the local address it listens on ("127.0.0.1", "::")
  long pid = 0;            // 0: not visible to this user
  std::string command;     // the process's command line, arguments separated by spaces
};

PortHolder find_port_holder(int port);

// "process 1234 (factorwatch --data /srv/fw serve) listens on 127.0.0.1:8750", "a process
// of another user listens on 0.0.0.0:8750", or "" when no socket listens on the port.
std::string describe_port_holder(const PortHolder& holder, int port);

}  // namespace factorwatch::server
