// `factorwatch windows NAME [--format table|csv|json]`: the stored windows of a model's
// current version with their fit statistics.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "cli_common.h"

namespace factorwatch::server {

struct WindowsArguments {
  std::string model;
  std::string format = "table";
};

CLI::App* add_windows_command(CLI::App& app, WindowsArguments& arguments);
int run_windows_command(const WindowsArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server
