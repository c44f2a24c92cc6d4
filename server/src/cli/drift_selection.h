// The command-line side of the drift, history and alerts commands: their thresholds in
// words (failures go through cli_failure.h).
#pragma once

#include "cli_common.h"
#include "cli_failure.h"
#include "factorwatch/pipeline/drift_query.h"

namespace factorwatch::server {

// An alert threshold for people: "congruence below 0.95", or "off" for 0.
std::string threshold_text(double threshold);

}  // namespace factorwatch::server
