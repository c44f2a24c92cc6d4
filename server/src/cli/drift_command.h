// `factorwatch drift NAME [--from DATE] [--to DATE] [--against previous|pinned|both]
// [--format table|csv|json]`: how each window's factors differ from the previous usable
// window's and from the pinned window's, as the refresh stored it.
// `factorwatch drift NAME --window DATE [--against previous|pinned]`: one window's
// comparison asset by asset.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "cli_common.h"

namespace factorwatch::server {

struct DriftArguments {
  std::string model;
  std::string from, to;  // "" = open ends
  std::string against;   // "" = both (previous for --window)
  std::string window;    // "" = every window in the range
  std::string format = "table";
  int limit = 0;         // table rows of a one-window comparison; 0 = all
};

CLI::App* add_drift_command(CLI::App& app, DriftArguments& arguments);
int run_drift_command(const DriftArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server
