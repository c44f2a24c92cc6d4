// `factorwatch token [--renew]`: prints the daemon's bearer token (creating it when
// missing), or replaces it.
#pragma once

#include <CLI/CLI.hpp>

#include "cli_common.h"

namespace factorwatch::server {

struct TokenArguments {
  bool renew = false;
};

CLI::App* add_token_command(CLI::App& app, TokenArguments& arguments);
int run_token_command(const TokenArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server
