// `factorwatch alerts NAME [--from DATE] [--to DATE] [--format table|csv|json]`: the
// windows whose factors drifted past the model's thresholds, factor by factor, with the
// assets that moved most.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "cli_common.h"

namespace factorwatch::server {

struct AlertsArguments {
  std::string model;
  std::string from, to;  // "" = open ends
  std::string format = "table";
};

CLI::App* add_alerts_command(CLI::App& app, AlertsArguments& arguments);
int run_alerts_command(const AlertsArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server
