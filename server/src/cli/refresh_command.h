// `factorwatch refresh [NAME]`: fit every window not yet stored (or stale) of one model,
// or of every model. Progress on a terminal; a summary on stdout.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "cli_common.h"

namespace factorwatch::server {

struct RefreshArguments {
  std::string model;  // "" = every model
  bool quiet = false;
};

CLI::App* add_refresh_command(CLI::App& app, RefreshArguments& arguments);

// Exit codes: 0 every window written is usable; 1 some fit failed (stored and flagged)
// or the database failed; 2 no such model.
int run_refresh_command(const RefreshArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server
