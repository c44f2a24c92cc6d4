// Date cells and date order, shared by the wide and long layouts.
#include <algorithm>
#include <numeric>

#include "cell_parse.h"
#include "factorwatch/storage/input_error.h"
#include "returns_layouts.h"

namespace factorwatch::storage::detail {

std::int32_t read_date(std::string_view cell, const std::string& path, std::size_t line,
                       const std::string& column) {
  auto key = parse_iso_date(cell);
  if (!key)
    throw InputError(path, line, column,
                     quoted(cell) + " is not a calendar date in the form yyyy-mm-dd");
  return *key;
}

std::vector<std::size_t> ascending_dates(const std::vector<DateRow>& dates, const std::string& path,
                                         const std::string& date_column) {
  std::vector<std::size_t> order(dates.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  // Files usually arrive sorted already; skip the sort then.
  const bool sorted = std::is_sorted(dates.begin(), dates.end(),
                                     [](const DateRow& a, const DateRow& b) { return a.key < b.key; });
  if (!sorted)
    std::stable_sort(order.begin(), order.end(),
                     [&](std::size_t a, std::size_t b) { return dates[a].key < dates[b].key; });
  for (std::size_t i = 1; i < order.size(); ++i) {
    const DateRow& first = dates[order[i - 1]];
    const DateRow& again = dates[order[i]];
    if (first.key == again.key)
      throw InputError(path, again.line, date_column,
                       "date " + std::string(again.text) + " appears twice (lines " +
                           std::to_string(first.line) + " and " + std::to_string(again.line) + ")");
  }
  return order;
}

}  // namespace factorwatch::storage::detail
