// `factorwatch verify`: checks the whole database (SQLite's integrity check and every
// stored checksum) and lists each problem; exit status 1 when there is any.
#pragma once

#include <CLI/CLI.hpp>

#include "cli_common.h"

namespace factorwatch::server {

struct VerifyArguments {
  std::string format = "table";
};

CLI::App* add_verify_command(CLI::App& app, VerifyArguments& arguments);
int run_verify_command(const VerifyArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server
