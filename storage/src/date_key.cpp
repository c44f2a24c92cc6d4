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

std::string utc_now() {
  const std::time_t now = std::time(nullptr);
  std::tm parts{};
  gmtime_r(&now, &parts);
  char text[32];
  std::strftime(text, sizeof text, "%Y-%m-%dT%H:%M:%SZ", &parts);
  return text;
}

std::string utc_timestamp() { return utc_now(); }

bool is_calendar_date(std::string_view text) { return detail::parse_iso_date(text).has_value(); }

}  // namespace factorwatch::storage
