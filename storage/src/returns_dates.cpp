// Date cells (both layouts) and the order of a long file's dates.
#include <algorithm>
#include <numeric>

#include "cell_parse.h"
#include "factorwatch/storage/input_error.h"
#include "returns_layouts.h"

namespace factorwatch::storage::detail {

engine::Date read_date(std::string_view cell, const std::string& path, std::size_t line,
                       const std::string& column) {
  const auto date = engine::Date::from_iso(cell);
  if (!date)
    throw InputError(path, line, column,
                     quoted(cell) + " is not a calendar date in the form yyyy-mm-dd");
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
