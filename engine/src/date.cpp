#include "factorwatch/engine/date.h"

#include <date/date.h>

#include <cstdio>
#include <ostream>

namespace factorwatch::engine {
namespace {

// Four or two ASCII digits at `from`; -1 when any is not a digit.
int digits(std::string_view text, std::size_t from, std::size_t count) {
  int v = 0;
  for (std::size_t i = from; i < from + count; ++i) {
    if (text[i] < '0' || text[i] > '9') return -1;
    v = v * 10 + (text[i] - '0');
  }
  return v;
}

std::optional<Date> from_parts(int y, int m, int d) {
  if (y < 1 || y > 9999 || m < 1 || d < 1) return std::nullopt;
  const date::year_month_day ymd{date::year{y}, date::month{unsigned(m)}, date::day{unsigned(d)}};
  if (!ymd.ok()) return std::nullopt;  // 30 February, 31 April, 29 February of a common year
  return Date::from_days(std::int32_t(date::sys_days(ymd).time_since_epoch().count()));
}

date::year_month_day civil(Date d) { return date::year_month_day{date::sys_days{date::days{d.days()}}}; }

}  // namespace

std::optional<Date> Date::from_iso(std::string_view text) {
  // Hand-read rather than date::parse: a nightly file has a date on every row, and the
  // stream-based parser accepts "2024-2-3" and trailing text.
  if (text.size() != 10 || text[4] != '-' || text[7] != '-') return std::nullopt;
  return from_parts(digits(text, 0, 4), digits(text, 5, 2), digits(text, 8, 2));
}

std::optional<Date> Date::from_key(std::int64_t key) {
  if (key < 10101 || key > 99991231) return std::nullopt;
  return from_parts(int(key / 10000), int(key / 100 % 100), int(key % 100));
}

std::string Date::iso() const {
  const auto ymd = civil(*this);
  char text[16];
  std::snprintf(text, sizeof text, "%04d-%02u-%02u", int(ymd.year()), unsigned(ymd.month()), unsigned(ymd.day()));
  return text;
}

std::int32_t Date::key() const {
  const auto ymd = civil(*this);
  return std::int32_t(int(ymd.year()) * 10000 + int(unsigned(ymd.month())) * 100 + int(unsigned(ymd.day())));
}

std::ostream& operator<<(std::ostream& out, Date d) { return out << d.iso(); }

}  // namespace factorwatch::engine
