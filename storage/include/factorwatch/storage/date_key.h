// Dates in the database are INTEGER yyyymmdd; everywhere else they are ISO text.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>

namespace factorwatch::storage {

// Throws std::invalid_argument naming `what` when `iso` is not a real yyyy-mm-dd date.
std::int32_t date_key(std::string_view iso, const char* what = "date");
std::string iso_date(std::int64_t key);

// Now, UTC, as yyyy-mm-ddThh:mm:ssZ.
std::string utc_now();

}  // namespace factorwatch::storage
