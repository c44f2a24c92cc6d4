// `factorwatch serve`: options of the daemon (see http_daemon.h for what it does).
#pragma once

#include <CLI/CLI.hpp>

#include "cli_common.h"
#include "http_daemon.h"

namespace factorwatch::server {

CLI::App* add_serve_command(CLI::App& app, DaemonOptions& options);
int run_serve_command(DaemonOptions options, const GlobalArguments& global);

}  // namespace factorwatch::server
