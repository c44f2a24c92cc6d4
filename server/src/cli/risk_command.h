// `factorwatch risk MODEL PORTFOLIO [--as-of DATE] [--holdings-as-of DATE]
// [--benchmark NAME | --no-benchmark] [--trade FILE] [--format table|csv|json]`: a
// portfolio's total, systematic and specific risk in a stored window, its factor
// exposures, contributions by factor and by asset, active risk against a benchmark, and
// the same after a proposed trade. `--weights FILE` measures a holdings file without
// storing it.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "cli_common.h"

namespace factorwatch::server {

struct RiskArguments {
  std::string model;
  std::string portfolio;
  std::string weights_path;
  std::string as_of;
  std::string holdings_as_of;
  std::string benchmark;
  bool no_benchmark = false;
  std::string trade_path;
  std::string format = "table";
  int limit = 10;
  bool no_assets = false;
};

CLI::App* add_risk_command(CLI::App& app, RiskArguments& arguments);
int run_risk_command(const RiskArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server
