// The one clock text of the program: what the database records (ingest runs, model
// versions, fitted windows) and what the daemon logs and reports for its jobs.
#pragma once

#include <string>

#include "factorwatch/engine/date.h"

namespace factorwatch::storage {

// Now, UTC, as yyyy-mm-ddThh:mm:ssZ.
std::string utc_timestamp();

// Today, UTC (the date of utc_timestamp).
engine::Date utc_today();

}  // namespace factorwatch::storage
