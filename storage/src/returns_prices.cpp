#include "returns_prices.h"

#include <cmath>
#include <cstdio>
#include <limits>

#include "cell_parse.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/returns_csv.h"

namespace factorwatch::storage::detail {
namespace {

[[noreturn]] void implausible_ratio(const engine::ReturnsPanel& prices, Eigen::Index t, Eigen::Index j,
                                    const std::string& path, const CellLines& lines) {
  const auto row = static_cast<std::size_t>(t), column = static_cast<std::size_t>(j);
  const double now = prices.values(t, j), before = prices.values(t - 1, j);
  const std::string step = "price " + shortest(now) + " of " + quoted(prices.assets[column]) + " on " +
                           prices.dates[row].iso() + " after " + shortest(before) + " on " + prices.dates[row - 1].iso() +
                           " (line " + std::to_string(lines.cell_line(row - 1, column)) + ")";
  const std::size_t line = lines.cell_line(row, column);
  const std::string& field = lines.file_column(column);
  if (now > before) {
    char percent[32];
    std::snprintf(percent, sizeof percent, "%+.0f %%", (now / before - 1) * 100);
    throw InputError(path, line, field,
                     step + " is a return of " + percent + ", above the +" + shortest(kLargestReturn * 100) +
                         " % limit for one period (a unit change or an unadjusted split?)");
  }
  throw InputError(path, line, field, step + " is a return at or below -100 %: a price cannot fall to zero");
}

}  // namespace

engine::ReturnsPanel prices_to_returns(const engine::ReturnsPanel& prices, bool log_returns,
                                       const std::string& path, const CellLines& lines,
                                       const std::string& date_column) {
  const Eigen::Index periods = prices.periods(), width = prices.width();
  if (periods < 2)
    throw InputError(path, lines.date_line(0), date_column,
                     "a price file needs at least two dates: the return on a date is computed from the "
                     "previous date's prices (include the previous date's prices in each file)");

  engine::ReturnsPanel out;
  out.assets = prices.assets;
  out.dates.assign(prices.dates.begin() + 1, prices.dates.end());
  out.values.resize(periods - 1, width);
  const double gap = std::numeric_limits<double>::quiet_NaN();
  for (Eigen::Index t = 1; t < periods; ++t) {
    const double* now = prices.values.data() + t * width;
    const double* before = now - width;
    double* r = out.values.data() + (t - 1) * width;
    for (Eigen::Index j = 0; j < width; ++j) {
      const double ratio = now[j] / before[j];  // NaN when either price is missing
      if (std::isnan(ratio)) {
        r[j] = gap;
        continue;
      }
      // Prices are > 0, so ratio <= 0 only by underflow; +inf by overflow fails the limit.
      // A ratio below about 1e-16 is > 0 yet makes ratio - 1 round to -1: a -100 % return
      // the returns rule refuses (found by fuzz/fuzz_returns_csv.cpp), refused here too.
      if (!(ratio > 0 && ratio - 1 > -1 && ratio - 1 <= kLargestReturn)) implausible_ratio(prices, t, j, path, lines);
      r[j] = log_returns ? std::log(ratio) : ratio - 1;
    }
  }
  return out;
}

}  // namespace factorwatch::storage::detail
