#include "factorwatch/storage/date_key.h"

#include <cstdio>
#include <ctime>
#include <stdexcept>

#include "factorwatch/storage/damaged_data.h"
#include "factorwatch/storage/timestamps.h"

namespace factorwatch::storage {

engine::Date stored_date(std::int64_t key) {
  if (auto d = engine::Date::from_key(key)) return *d;
  throw DamagedData("stored date key " + std::to_string(key) + " is not a date (yyyymmdd)");
}

std::string key_text(std::int64_t key) {
  const auto date = engine::Date::from_key(key);
  return date ? date->iso() : "date key " + std::to_string(key);
}

std::string utc_timestamp() {
  const std::time_t now = std::time(nullptr);
  std::tm parts{};
  gmtime_r(&now, &parts);
  char text[32];
  std::strftime(text, sizeof text, "%Y-%m-%dT%H:%M:%SZ", &parts);
  return text;
}

engine::Date utc_today() {
  // POSIX time counts 86400 seconds a day (no leap seconds), from 1970-01-01 as Date does.
  return engine::Date::from_days(static_cast<std::int32_t>(std::time(nullptr) / 86400));
}

engine::Date latest_date_begun() {
  constexpr std::time_t kEarliestZoneAheadOfUtc = 14 * 3600;
  return engine::Date::from_days(static_cast<std::int32_t>((std::time(nullptr) + kEarliestZoneAheadOfUtc) / 86400));
}

}  // namespace factorwatch::storage
