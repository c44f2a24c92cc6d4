// The one clock text of the program: what the database records (ingest runs, model
// versions, fitted windows) and what the daemon logs and reports for its jobs.
#pragma once

#include <string>

namespace factorwatch::storage {

// Now, UTC, as yyyy-mm-ddThh:mm:ssZ.
std::string utc_timestamp();

}  // namespace factorwatch::storage
