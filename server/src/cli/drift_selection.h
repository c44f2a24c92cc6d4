// The command-line side of the drift, history and alerts commands: a failed lookup turned
// into a message on stderr naming the option, and an exit code.
#pragma once

#include "cli_common.h"
#include "factorwatch/pipeline/drift_query.h"

namespace factorwatch::server {

// Prints "factorwatch COMMAND: option '--from' = 'x': ..." (or the model's message with a
// hint) and returns the exit code: 2 for bad input, an unknown model or asset; 1 when the
// window or its comparison is not stored (yet).
int report_query_failure(const char* command, const pipeline::QueryFailure& failure, const std::string& model);

// An alert threshold for people: "congruence below 0.95", or "off" for 0.
std::string threshold_text(double threshold);

}  // namespace factorwatch::server
