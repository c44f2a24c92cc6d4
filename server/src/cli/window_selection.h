// The command-line side of the one-window commands (`exposures`, `specific-risk`): their
// shared options, and failures turned into messages on stderr and exit codes.
#pragma once

#include <CLI/CLI.hpp>
#include <functional>
#include <optional>
#include <string>

#include "cli_common.h"
#include "cli_failure.h"
#include "factorwatch/pipeline/window_query.h"

namespace factorwatch::server {

struct WindowArguments {
  std::string model;
  std::string as_of;   // "" = latest
  std::string assets;  // "" = all, else comma-separated
  std::string format = "table";
  int limit = 0;       // table rows to show; 0 = all
};

// NAME, --as-of, --assets, --format, --limit: the options of every one-window command.
void add_window_options(CLI::App* command, WindowArguments& arguments);

// Opens the database, selects the window and hands it to `print`; turns every failure
// into a message on stderr and an exit code.
int run_on_window(const WindowArguments& arguments, const GlobalArguments& global, const char* command,
                  const std::function<void(const pipeline::SelectedWindow&)>& print);

}  // namespace factorwatch::server
