// Civil-date arithmetic for the demo universe's business-day calendar.
//
// Hand-written (days-from-civil, proleptic Gregorian) so the demo library needs
// nothing beyond Eigen. Days are counted from 1970-01-01 = day 0.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

namespace factorwatch::demo {

struct CivilDate {
  int year = 1970;
  int month = 1;  // 1..12
  int day = 1;    // 1..31
};

// Day number of a civil date (1970-01-01 -> 0); valid for any int year in range.
std::int64_t days_from_civil(const CivilDate& date);
// Inverse of days_from_civil.
CivilDate civil_from_days(std::int64_t days);
// 0 = Monday ... 6 = Sunday.
int weekday(std::int64_t days);

// Strict "yyyy-mm-dd" with a day that exists in that month; nullopt otherwise.
std::optional<CivilDate> parse_iso_date(const std::string& text);
std::string format_iso_date(const CivilDate& date);

// Monday-to-Friday dates (no holidays) from the first business day on or after
// `start` up to, not including, the same month and day `years` later, as ISO
// strings in ascending order. Feb 29 starts end on Mar 1 of a non-leap end year.
std::vector<std::string> business_days(const CivilDate& start, int years);

}  // namespace factorwatch::demo
