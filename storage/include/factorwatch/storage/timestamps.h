// The one clock text of the program: what the database records (ingest runs, model
// versions, fitted windows) and what the daemon logs and reports for its jobs.
#pragma once

#include <string>
#include <string_view>

namespace factorwatch::storage {

// Now, UTC, as yyyy-mm-ddThh:mm:ssZ.
std::string utc_timestamp();

// A real calendar date written yyyy-mm-dd: the rule every stored date follows, for
// callers that check user input before asking the database.
bool is_calendar_date(std::string_view text);

}  // namespace factorwatch::storage
