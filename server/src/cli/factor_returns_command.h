// `factorwatch factor-returns NAME [--from DATE] [--to DATE] [--method bartlett|regression]
// [--format table|csv|json]`: the factor-return series, each window's factor returns on
// its own as-of date under its served (rotated and aligned) factors.
// `factorwatch factor-returns NAME --window DATE`: every date of one window.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "cli_common.h"

namespace factorwatch::server {

struct FactorReturnsArguments {
  std::string model;
  std::string window;     // "" = the series across windows
  std::string from, to;   // "" = open ends
  std::string method = "bartlett";
  std::string format = "table";
};

CLI::App* add_factor_returns_command(CLI::App& app, FactorReturnsArguments& arguments);
int run_factor_returns_command(const FactorReturnsArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server
