// The command-line side of `factor-returns` and `residuals`: the --method option (failures
// go through cli_failure.h).
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "cli_common.h"
#include "cli_failure.h"
#include "factorwatch/pipeline/drift_query.h"

namespace factorwatch::server {

// --method bartlett|regression (default bartlett).
void add_score_method_option(CLI::App* command, std::string& method);

}  // namespace factorwatch::server
