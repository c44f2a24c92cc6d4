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

// The latest date that has begun somewhere on earth: today in UTC+14 (the Line Islands,
// the earliest time zone). A date after it cannot have been traded yet, wherever the
// market is, so a returns file holding one has a typo.
engine::Date latest_date_begun();

}  // namespace factorwatch::storage
