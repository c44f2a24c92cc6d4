// Date cells (both layouts) and the order of a long file's dates.
#include <algorithm>
#include <numeric>

#include "cell_parse.h"
#include "factorwatch/storage/input_error.h"
#include "returns_layouts.h"

namespace factorwatch::storage::detail {

engine::Date read_date(std::string_view cell, const ReturnsHeader& header, std::size_t line,
                       const std::string& column) {
  static const char* const kDayNames[] = {"Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday"};
  const auto date = engine::Date::from_iso(cell);
  if (!date)
    throw InputError(header.path, line, column, quoted(cell) + " is not a calendar date in the form yyyy-mm-dd");
  if (!header.dates.weekends && date->weekday() >= 5)
    throw InputError(header.path, line, column,
                     quoted(cell) + " is a " + kDayNames[date->weekday()] +
                         ": a returns file holds weekdays only, unless it declares a calendar with weekends "
                         "by the line '# calendar: all days' before the header");
  if (*date > header.dates.latest)
    throw InputError(header.path, line, column,
                     quoted(cell) + " is in the future: no day after " + header.dates.latest.iso() +
                         " has begun anywhere on earth yet");
  return *date;
}

std::vector<std::size_t> ascending_order(const std::vector<DateRow>& dates) {
  std::vector<std::size_t> order(dates.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  // Files usually arrive sorted already; skip the sort then.
  const auto earlier = [&](std::size_t a, std::size_t b) { return dates[a].date < dates[b].date; };
  if (!std::is_sorted(order.begin(), order.end(), earlier)) std::sort(order.begin(), order.end(), earlier);
  return order;
}

}  // namespace factorwatch::storage::detail
