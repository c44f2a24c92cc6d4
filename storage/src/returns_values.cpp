#include "returns_values.h"

#include <algorithm>
#include <cstdio>
#include <vector>

#include "factorwatch/storage/input_error.h"
#include "returns_prices.h"

namespace factorwatch::storage::detail {
namespace {

constexpr const char* kConvertPercent = "convert percent to fractions (5 % is 0.05)";

// "10 (1000 %" for 10: messages built from the constants follow them if they change.
std::string with_percent(double fraction) {
  return shortest(fraction) + " (" + shortest(fraction * 100) + " %";
}

}  // namespace

ValueRules::ValueRules(const std::string& path, ValuesInFile values)
    : path_(path), values_(values), prices_(values != ValuesInFile::returns) {}

void ValueRules::bad_cell(Cell kind, std::string_view cell, std::size_t line,
                          const std::string& column) const {
  std::string problem = describe_bad_cell(kind, cell);
  if (kind == Cell::not_finite) problem += " (a missing value is an empty cell or NA)";
  throw InputError(path_, line, column, problem);
}

void ValueRules::not_a_price(std::string_view cell, std::size_t line, const std::string& column) const {
  throw InputError(path_, line, column,
                   "price " + quoted(cell) + " is not above 0 (prices must be positive)");
}

void ValueRules::at_or_below_minus_one(std::string_view cell, std::size_t line,
                                       const std::string& column) const {
  throw InputError(path_, line, column,
                   "return " + quoted(cell) + " is at or below -1 (-100 %): a price cannot fall to zero or " +
                       "below; if the file is in percent, " + kConvertPercent);
}

void ValueRules::too_large(std::string_view cell, std::size_t line, const std::string& column) const {
  throw InputError(path_, line, column,
                   "return " + quoted(cell) + " is above " + with_percent(kLargestReturn) +
                       " in one period): if the file is in " +
                       "percent, " + kConvertPercent);
}

void ValueRules::finish(engine::ReturnsPanel& panel, const CellLines& lines,
                        const std::string& date_column) const {
  if (prices_) {
    const bool log_returns = values_ == ValuesInFile::prices_to_log_returns;
    panel = prices_to_returns(panel, log_returns, path_, lines, date_column);
    return;
  }
  check_not_percent(panel);
}

// More than half of the values above the limit is the same as a (lower) median above
// it, and needs only two counters while reading; the median itself is worked out for
// the message only.
void ValueRules::check_not_percent(const engine::ReturnsPanel& panel) const {
  if (present_ < kPercentCheckMinValues || 2 * above_limit_ <= present_) return;
  std::vector<double> sizes;
  sizes.reserve(present_);
  const double* v = panel.values.data();
  for (Eigen::Index k = 0; k < panel.values.size(); ++k)
    if (!std::isnan(v[k])) sizes.push_back(std::fabs(v[k]));
  const auto middle = sizes.begin() + static_cast<std::ptrdiff_t>((sizes.size() - 1) / 2);
  std::nth_element(sizes.begin(), middle, sizes.end());
  throw InputError(path_, first_above_line_, *first_above_column_,
                   "the file looks like percent: the median absolute return of its " +
                       std::to_string(present_) + " values is " + shortest(*middle) +
                       ", above " + with_percent(kPercentMedianLimit) +
                       " per period); this is its first value above " + shortest(kPercentMedianLimit) + ": " +
                       kConvertPercent);
}

}  // namespace factorwatch::storage::detail
