// Dates in the database are INTEGER yyyymmdd; everywhere else they are ISO text.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>

namespace factorwatch::storage {

// Throws std::invalid_argument naming `what` when `iso` is not a real yyyy-mm-dd date.
std::int32_t date_key(std::string_view iso, const char* what = "date");
std::string iso_date(std::int64_t key);

// Days since 1970-01-01 of a valid date key (proleptic Gregorian calendar; negative
// before 1970): the count the engine takes where a span of dates matters.
long day_count(std::int32_t key);

}  // namespace factorwatch::storage
