// `factorwatch residuals NAME ASSET [--window DATE] [--method bartlett|regression]
// [--format table|csv|json]`: one asset's residual (specific) returns over a window's
// dates, return - mean - loadings . factor returns, with its mean, loadings and specific
// variance in that window.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "cli_common.h"

namespace factorwatch::server {

struct ResidualsArguments {
  std::string model;
  std::string asset;
  std::string window;  // "" = the latest window
  std::string method = "bartlett";
  std::string format = "table";
};

CLI::App* add_residuals_command(CLI::App& app, ResidualsArguments& arguments);
int run_residuals_command(const ResidualsArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server
