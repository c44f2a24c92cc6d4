// `factorwatch exposures NAME [--as-of DATE] [--assets LIST] [--format table|csv|json]`:
// each asset's loadings on the factors of a stored window, its communality, specific
// variance and uniqueness.
#pragma once

#include <CLI/CLI.hpp>

#include "cli_common.h"
#include "window_selection.h"

namespace factorwatch::server {

CLI::App* add_exposures_command(CLI::App& app, WindowArguments& arguments);
int run_exposures_command(const WindowArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server
