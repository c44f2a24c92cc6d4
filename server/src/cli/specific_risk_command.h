// `factorwatch specific-risk NAME [--as-of DATE] [--assets LIST] [--format table|csv|json]`:
// each asset's specific (idiosyncratic) risk in a stored window, per period and
// annualised, and its share of the asset's modelled variance.
#pragma once

#include <CLI/CLI.hpp>

#include "cli_common.h"
#include "window_selection.h"

namespace factorwatch::server {

CLI::App* add_specific_risk_command(CLI::App& app, WindowArguments& arguments);
int run_specific_risk_command(const WindowArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server
