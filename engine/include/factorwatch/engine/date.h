// A calendar date: the one date type of the program. A date is parsed once, where it
// enters (a CSV cell, a command-line option, an HTTP parameter, a stored key), passed
// down as this value, and written as text again only where it leaves. Built on Howard
// Hinnant's date library (Debian's libhowardhinnant-date-dev), which the C++20 calendar
// adopted: proleptic Gregorian, no time zone.
#pragma once

#include <cstdint>
#include <iosfwd>
#include <optional>
#include <string>
#include <string_view>

namespace factorwatch::engine {

class Date {
 public:
  // 1970-01-01; a value to assign over, not a date anyone means.
  constexpr Date() = default;

  // Exactly yyyy-mm-dd with a real day of a year from 0001 to 9999 ("2024-02-30",
  // "2024-2-3" and "20240203" are not dates); nullopt otherwise.
  static std::optional<Date> from_iso(std::string_view text);
  // The database's INTEGER key yyyymmdd; nullopt when it names no real day.
  static std::optional<Date> from_key(std::int64_t key);
  // Days since 1970-01-01 (negative before).
  static constexpr Date from_days(std::int32_t days) { return Date(days); }

  std::string iso() const;        // yyyy-mm-dd
  std::int32_t key() const;       // yyyymmdd: the SQL key, ordered as the dates are
  constexpr std::int32_t days() const { return days_; }  // since 1970-01-01
  // 0 = Monday .. 6 = Sunday (1970-01-01 was a Thursday).
  constexpr int weekday() const { return static_cast<int>(((days_ + 3) % 7 + 7) % 7); }

  friend constexpr bool operator==(Date a, Date b) { return a.days_ == b.days_; }
  friend constexpr bool operator!=(Date a, Date b) { return a.days_ != b.days_; }
  friend constexpr bool operator<(Date a, Date b) { return a.days_ < b.days_; }
  friend constexpr bool operator<=(Date a, Date b) { return a.days_ <= b.days_; }
  friend constexpr bool operator>(Date a, Date b) { return a.days_ > b.days_; }
  friend constexpr bool operator>=(Date a, Date b) { return a.days_ >= b.days_; }

 private:
  constexpr explicit Date(std::int32_t days) : days_(days) {}
  std::int32_t days_ = 0;
};

// yyyy-mm-dd (test failure messages, logs).
std::ostream& operator<<(std::ostream& out, Date d);

// yyyy-mm-dd, or "" for no date (a failure's value, an open end).
inline std::string iso_or_empty(const std::optional<Date>& d) { return d ? d->iso() : std::string(); }

// b - a in calendar days.
constexpr long days_between(Date a, Date b) { return long(b.days()) - long(a.days()); }

}  // namespace factorwatch::engine
