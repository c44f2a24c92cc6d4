// The command-line side of `factor-returns` and `residuals`: the --method option, and a
// failed lookup turned into a message on stderr naming the option and an exit code.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "cli_common.h"
#include "factorwatch/pipeline/drift_query.h"

namespace factorwatch::server {

// --method bartlett|regression (default bartlett).
void add_score_method_option(CLI::App* command, std::string& method);

// As report_query_failure (drift_selection.h), and for a failure naming no field (the
// model has no window at all yet) the message with the refresh hint.
int report_scores_failure(const char* command, const pipeline::QueryFailure& failure, const std::string& model);

}  // namespace factorwatch::server
