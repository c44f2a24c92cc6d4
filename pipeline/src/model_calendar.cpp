#include "model_calendar.h"

#include <algorithm>
#include <deque>

namespace factorwatch::pipeline::detail {

std::vector<engine::Date> calendar_of(const std::vector<storage::DateCount>& counts) {
  std::vector<engine::Date> out;
  out.reserve(counts.size());
  // Positions of the counts in the lookback that can still be its largest (a monotone
  // queue: the front is the largest of the last kCalendarLookback + 1 dates).
  std::deque<std::size_t> busiest;
  for (std::size_t t = 0; t < counts.size(); ++t) {
    while (!busiest.empty() && counts[busiest.back()].assets <= counts[t].assets) busiest.pop_back();
    busiest.push_back(t);
    if (busiest.front() + kCalendarLookback < t) busiest.pop_front();
    const int largest = counts[busiest.front()].assets;
    if (counts[t].assets > 0 && 2 * counts[t].assets >= largest) out.push_back(counts[t].date);
  }
  return out;
}

std::vector<engine::Date> model_calendar(storage::Database& db, const std::vector<std::int32_t>& universe) {
  return calendar_of(storage::stored_date_counts(db, universe));
}

std::vector<engine::Date> window_dates(const std::vector<engine::Date>& stored, engine::Date first, engine::Date as_of,
                                       const std::vector<engine::Date>& skipped) {
  std::vector<engine::Date> out;
  const auto from = std::lower_bound(stored.begin(), stored.end(), first);
  const auto to = std::upper_bound(from, stored.end(), as_of);
  std::set_difference(from, to, skipped.begin(), skipped.end(), std::back_inserter(out));
  return out;
}

}  // namespace factorwatch::pipeline::detail
