// `factorwatch serve`: the HTTP daemon. The only file that includes the HTTP library
// (cpp-httplib) is http_daemon.cpp; endpoint handlers see plain ApiRequest values.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

namespace factorwatch::server {

struct DaemonOptions {
  std::string data_dir;              // --data ("" = FACTORWATCH_DATA or the default)
  std::string address = "127.0.0.1";
  int port = 8750;                   // 0 = any free port (printed)
  int threads = 64;                  // request worker threads (each serves one connection at a time)
  std::size_t max_upload_mb = 1024;  // largest request body, MiB
  bool reads_need_token = false;     // forced on for non-loopback addresses
  int read_timeout_seconds = 30;     // a request's head and body must arrive within this, in all
  int head_timeout_seconds = 10;     // a request's head (line and fields) within this of its first byte
  int write_timeout_seconds = 30;    // per socket write while sending a response
  int max_connections = 256;         // open at once; beyond it the slowest waiting one is closed
  std::vector<std::string> allowed_hosts;  // --allow-host: Host names accepted besides the listening address
  std::size_t cache_mb = 256;        // rendered response bodies kept in memory, MiB
  std::string program = "factorwatch";  // as invoked, for the commands the banner suggests

  // True when usable; otherwise *error names the option and the rule.
  bool IsValid(std::string* error) const;
};

// Runs until SIGTERM or SIGINT; the exit code of the command.
int run_daemon(const DaemonOptions& options);

}  // namespace factorwatch::server
