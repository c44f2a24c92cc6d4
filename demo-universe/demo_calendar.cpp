#include "demo_calendar.h"

#include <cstdio>

namespace factorwatch::demo {
namespace {

bool is_leap(int year) { return (year % 4 == 0 && year % 100 != 0) || year % 400 == 0; }

int days_in_month(int year, int month) {
  static const int kDays[12] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
  return month == 2 && is_leap(year) ? 29 : kDays[month - 1];
}

}  // namespace

// The era-based algorithm: a 400-year era has exactly 146097 days, and starting
// the year in March puts the leap day last, so day-of-year is a closed formula.
std::int64_t days_from_civil(const CivilDate& date) {
  const std::int64_t y = static_cast<std::int64_t>(date.year) - (date.month <= 2 ? 1 : 0);
  const std::int64_t era = (y >= 0 ? y : y - 399) / 400;
  const std::int64_t year_of_era = y - era * 400;                                   // [0, 399]
  const std::int64_t month_from_march = date.month > 2 ? date.month - 3 : date.month + 9;  // [0, 11]
  const std::int64_t day_of_year = (153 * month_from_march + 2) / 5 + date.day - 1;  // [0, 365]
  const std::int64_t day_of_era =
      year_of_era * 365 + year_of_era / 4 - year_of_era / 100 + day_of_year;  // [0, 146096]
  return era * 146097 + day_of_era - 719468;  // 719468 = days from 0000-03-01 to 1970-01-01
}

CivilDate civil_from_days(std::int64_t days) {
  days += 719468;
  const std::int64_t era = (days >= 0 ? days : days - 146096) / 146097;
  const std::int64_t day_of_era = days - era * 146097;
  const std::int64_t year_of_era =
      (day_of_era - day_of_era / 1460 + day_of_era / 36524 - day_of_era / 146096) / 365;
  const std::int64_t day_of_year = day_of_era - (365 * year_of_era + year_of_era / 4 - year_of_era / 100);
  const std::int64_t month_from_march = (5 * day_of_year + 2) / 153;
  CivilDate out;
  out.day = static_cast<int>(day_of_year - (153 * month_from_march + 2) / 5 + 1);
  out.month = static_cast<int>(month_from_march < 10 ? month_from_march + 3 : month_from_march - 9);
  out.year = static_cast<int>(year_of_era + era * 400 + (out.month <= 2 ? 1 : 0));
  return out;
}

int weekday(std::int64_t days) {
  // 1970-01-01 was a Thursday (3 with Monday = 0).
  const std::int64_t w = (days + 3) % 7;
  return static_cast<int>(w < 0 ? w + 7 : w);
}

std::optional<CivilDate> parse_iso_date(const std::string& text) {
  if (text.size() != 10 || text[4] != '-' || text[7] != '-') return std::nullopt;
  for (std::size_t i : {0, 1, 2, 3, 5, 6, 8, 9}) {
    if (text[i] < '0' || text[i] > '9') return std::nullopt;
  }
  const auto digits = [&](std::size_t from, std::size_t count) {
    int v = 0;
    for (std::size_t i = from; i < from + count; ++i) v = v * 10 + (text[i] - '0');
    return v;
  };
  CivilDate d{digits(0, 4), digits(5, 2), digits(8, 2)};
  if (d.month < 1 || d.month > 12 || d.day < 1 || d.day > days_in_month(d.year, d.month)) {
    return std::nullopt;
  }
  return d;
}

std::string format_iso_date(const CivilDate& date) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%04d-%02d-%02d", date.year, date.month, date.day);
  return buffer;
}

std::vector<std::string> business_days(const CivilDate& start, int years) {
  CivilDate end = start;
  end.year += years;
  if (end.month == 2 && end.day == 29 && !is_leap(end.year)) {
    end.month = 3;
    end.day = 1;
  }
  const std::int64_t first = days_from_civil(start);
  const std::int64_t last = days_from_civil(end);  // exclusive
  std::vector<std::string> out;
  out.reserve(static_cast<std::size_t>((last - first) * 5 / 7 + 2));
  for (std::int64_t d = first; d < last; ++d) {
    if (weekday(d) < 5) out.push_back(format_iso_date(civil_from_days(d)));
  }
  return out;
}

}  // namespace factorwatch::demo
