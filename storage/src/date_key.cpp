#include "factorwatch/storage/date_key.h"

#include <cstdio>
#include <ctime>
#include <stdexcept>

#include "cell_parse.h"
#include "factorwatch/storage/timestamps.h"

namespace factorwatch::storage {

std::int32_t date_key(std::string_view iso, const char* what) {
  const auto key = detail::parse_iso_date(iso);
  if (!key) throw std::invalid_argument(std::string(what) + " " + detail::quoted(iso) + " is not a date in the form yyyy-mm-dd");
  return *key;
}

std::string iso_date(std::int64_t key) {
  char text[16];
  std::snprintf(text, sizeof text, "%04d-%02d-%02d", static_cast<int>(key / 10000), static_cast<int>(key / 100 % 100),
                static_cast<int>(key % 100));
  return text;
}

long day_count(std::int32_t key) {
  // Richards' days-from-civil, as in H. Hinnant's "chrono-compatible low-level date
  // algorithms": March-based years make the leap day the last day of a year.
  long y = key / 10000;
  const long m = key / 100 % 100, d = key % 100;
  y -= m <= 2;
  const long era = (y >= 0 ? y : y - 399) / 400;
  const long yoe = y - era * 400;
  const long doy = (153 * (m + (m > 2 ? -3 : 9)) + 2) / 5 + d - 1;
  const long doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
  return era * 146097 + doe - 719468;
}

std::string utc_timestamp() {
  const std::time_t now = std::time(nullptr);
  std::tm parts{};
  gmtime_r(&now, &parts);
  char text[32];
  std::strftime(text, sizeof text, "%Y-%m-%dT%H:%M:%SZ", &parts);
  return text;
}

bool is_calendar_date(std::string_view text) { return detail::parse_iso_date(text).has_value(); }

}  // namespace factorwatch::storage
