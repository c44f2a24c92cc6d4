// The value rules of a returns file (see returns_csv.h), in one place for both layouts:
// each cell is checked as it is read, when its line and column are at hand; what needs
// the whole file (the percent rule, turning prices into returns) runs once at the end.
#pragma once

#include <cmath>
#include <cstddef>
#include <limits>
#include <string>
#include <string_view>

#include "cell_lines.h"
#include "cell_parse.h"
#include "factorwatch/engine/panel.h"
#include "factorwatch/storage/returns_csv.h"

namespace factorwatch::storage::detail {

class ValueRules {
 public:
  ValueRules(const std::string& path, ValuesInFile values);

  // Reads one value cell: NaN for a gap, otherwise the checked number. Inline because it
  // runs once per cell (12.6 million times for a large long file).
  double read(std::string_view cell, std::size_t line, const std::string& column) {
    double value = 0;
    const Cell kind = parse_cell(cell, value);
    if (kind == Cell::gap) return std::numeric_limits<double>::quiet_NaN();
    if (kind != Cell::number) bad_cell(kind, cell, line, column);
    if (prices_) {
      if (!(value > 0)) not_a_price(cell, line, column);
      return value;
    }
    if (value <= -1) at_or_below_minus_one(cell, line, column);
    if (value > kLargestReturn) too_large(cell, line, column);
    if (std::fabs(value) > kPercentMedianLimit && above_limit_++ == 0) {
      first_above_line_ = line;
      first_above_column_ = &column;
    }
    ++present_;
    return value;
  }

  // After the last row, with the panel's dates ascending: the percent rule for returns;
  // for prices, replaces the panel by its returns (one date fewer).
  void finish(engine::ReturnsPanel& panel, const CellLines& lines,
              const std::string& date_column) const;

 private:
  [[noreturn]] void bad_cell(Cell kind, std::string_view cell, std::size_t line,
                             const std::string& column) const;
  [[noreturn]] void not_a_price(std::string_view cell, std::size_t line, const std::string& column) const;
  [[noreturn]] void at_or_below_minus_one(std::string_view cell, std::size_t line,
                                          const std::string& column) const;
  [[noreturn]] void too_large(std::string_view cell, std::size_t line, const std::string& column) const;
  void check_not_percent(const engine::ReturnsPanel& panel) const;

  const std::string& path_;
  ValuesInFile values_;
  bool prices_;
  std::size_t present_ = 0;      // returns read (not gaps)
  std::size_t above_limit_ = 0;  // of which |r| > kPercentMedianLimit
  std::size_t first_above_line_ = 0;
  const std::string* first_above_column_ = nullptr;
};

}  // namespace factorwatch::storage::detail
