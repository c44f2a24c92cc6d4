// `factorwatch history NAME ASSET [--from DATE] [--to DATE] [--format table|csv|json]`:
// one asset's served exposures (rotated and aligned), communality and specific risk in
// every window of a model.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "cli_common.h"

namespace factorwatch::server {

struct HistoryArguments {
  std::string model, asset;
  std::string from, to;  // "" = open ends
  std::string format = "table";
};

CLI::App* add_history_command(CLI::App& app, HistoryArguments& arguments);
int run_history_command(const HistoryArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server
