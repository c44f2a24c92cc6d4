#include "demo_calendar.h"

namespace factorwatch::demo {

std::vector<engine::Date> business_days(engine::Date start, int years) {
  const std::int32_t key = start.key() + years * 10000;  // the same month and day
  const auto same_day = engine::Date::from_key(key);
  const engine::Date end = same_day ? *same_day : *engine::Date::from_key(key - key % 10000 + 301);  // 29 Feb -> 1 Mar
  std::vector<engine::Date> out;
  out.reserve(static_cast<std::size_t>(engine::days_between(start, end) * 5 / 7 + 2));
  for (engine::Date d = start; d < end; d = engine::Date::from_days(d.days() + 1))
    if (d.weekday() < 5) out.push_back(d);
  return out;
}

}  // namespace factorwatch::demo
