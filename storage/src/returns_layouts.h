// The two layouts of a returns file, read after the header row (see returns_csv.h).
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "csv_scanner.h"
#include "factorwatch/engine/panel.h"

namespace factorwatch::storage::detail {

// What the reader knows about the file at the point it dispatches on the header.
struct ReturnsHeader {
  const std::string& path;
  std::string_view text;  // the whole file (after any BOM), for locating lines again
  std::vector<std::string> names;
  std::size_t line = 0;
};

engine::ReturnsPanel read_wide_returns(CsvScanner& scanner, const ReturnsHeader& header);

// date_col, asset_col, return_col: positions of the three columns in the header.
engine::ReturnsPanel read_long_returns(CsvScanner& scanner, const ReturnsHeader& header,
                                       std::size_t date_col, std::size_t asset_col,
                                       std::size_t return_col);

// One date of the file: its sort key (yyyymmdd), its text and the line it was read on.
struct DateRow {
  std::int32_t key;
  std::string_view text;
  std::size_t line;
};

// Order in which to take the dates so they ascend (stable). Throws InputError naming
// both lines when a date occurs twice.
std::vector<std::size_t> ascending_dates(const std::vector<DateRow>& dates, const std::string& path,
                                         const std::string& date_column);

// Reads the date cell of a record; throws InputError naming the column when invalid.
std::int32_t read_date(std::string_view cell, const std::string& path, std::size_t line,
                       const std::string& column);

}  // namespace factorwatch::storage::detail
