// The two layouts of a returns file, read after the header row (see returns_csv.h).
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "csv_scanner.h"
#include "factorwatch/engine/panel.h"
#include "factorwatch/storage/returns_csv.h"
#include "returns_values.h"

namespace factorwatch::storage::detail {

// Which dates a file may hold (returns_csv.h, "the calendar").
struct DateRules {
  bool weekends = false;  // declared by "# calendar: all days"
  engine::Date latest;    // no date after it
};

// What the reader knows about the file at the point it dispatches on the header.
struct ReturnsHeader {
  const std::string& path;
  std::string_view text;  // the whole file (after any BOM), for locating lines again
  std::vector<std::string> names;
  std::size_t line = 0;
  DateRules dates;
};

// Each reader returns the panel after values.finish() (returns, dates ascending) and the
// number of data rows; the caller fills in the rest of ReturnsFile.
ReturnsFile read_wide_returns(CsvScanner& scanner, const ReturnsHeader& header, ValueRules& values);

// date_col, asset_col, return_col: positions of the three columns in the header.
ReturnsFile read_long_returns(CsvScanner& scanner, const ReturnsHeader& header, ValueRules& values,
                              std::size_t date_col, std::size_t asset_col, std::size_t return_col);

// One date of the file: the date, its text and the line it was read on.
struct DateRow {
  engine::Date date;
  std::string_view text;
  std::size_t line;
};

// Order in which to take `dates` (distinct keys) so that they ascend. A long file's dates
// come in any order; a wide file's must already ascend (checked row by row).
std::vector<std::size_t> ascending_order(const std::vector<DateRow>& dates);

// Reads the date cell of a record; throws InputError naming the column when it is not a
// date or one the header's DateRules refuse.
engine::Date read_date(std::string_view cell, const ReturnsHeader& header, std::size_t line,
                       const std::string& column);

}  // namespace factorwatch::storage::detail
