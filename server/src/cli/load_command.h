// `factorwatch load FILE`: validate a returns (or prices) file in full, then merge it into
// the database in one transaction. A file with any error changes nothing.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "cli_common.h"
#include "factorwatch/storage/returns_csv.h"

namespace factorwatch::server {

struct LoadArguments {
  std::string path;
  bool prices = false;       // the cells are prices: store simple returns
  bool log_returns = false;  // with --prices: store log returns instead
  std::size_t max_input_mb = storage::kLargestInputBytes >> 20;  // refuse larger files and streams
};

CLI::App* add_load_command(CLI::App& app, LoadArguments& arguments);

// Exit codes: 0 stored (or nothing new); 2 the file was rejected, nothing changed;
// 1 the database could not be opened or written.
int run_load_command(const LoadArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server
