// `factorwatch portfolio set NAME FILE [--as-of DATE] [--benchmark NAME]`, `portfolio list`,
// `portfolio show NAME [--as-of DATE]`, `portfolio delete NAME [--as-of DATE]`: named
// portfolios and benchmarks (storage/portfolios.h has the file rules).
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "cli_common.h"

namespace factorwatch::server {

struct PortfolioArguments {
  std::string name;
  std::string path;
  std::string as_of;
  std::string benchmark;
  std::string format = "table";
  CLI::App *set = nullptr, *list = nullptr, *show = nullptr, *remove = nullptr;
};

CLI::App* add_portfolio_command(CLI::App& app, PortfolioArguments& arguments);
int run_portfolio_command(const PortfolioArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server
