#include "factorwatch/engine/frequency.h"

#include <cstdlib>

namespace factorwatch::engine {
namespace {

// Days since 1970-01-01 of a proleptic Gregorian date (Richards' civil-from-days inverse,
// as in H. Hinnant's "chrono-compatible low-level date algorithms").
long days_from_civil(long y, long m, long d) {
  y -= m <= 2;
  const long era = (y >= 0 ? y : y - 399) / 400;
  const long yoe = y - era * 400;
  const long doy = (153 * (m + (m > 2 ? -3 : 9)) + 2) / 5 + d - 1;
  const long doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
  return era * 146097 + doe - 719468;
}

long day_number(const std::string& iso) {
  if (iso.size() < 10) return 0;
  return days_from_civil(std::atol(iso.substr(0, 4).c_str()), std::atol(iso.substr(5, 2).c_str()),
                         std::atol(iso.substr(8, 2).c_str()));
}

}  // namespace

Frequency frequency_from_gap(double days) {
  if (days <= 4) return {"daily", 252};
  if (days <= 10) return {"weekly", 52};
  if (days <= 45) return {"monthly", 12};
  if (days <= 120) return {"quarterly", 4};
  return {"annual", 1};
}

long days_between(const std::string& first, const std::string& last) { return day_number(last) - day_number(first); }

}  // namespace factorwatch::engine
