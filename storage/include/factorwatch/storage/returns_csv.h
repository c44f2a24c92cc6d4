// Reading a returns file (CSV) into a panel of dates by assets.
//
// Two layouts, told apart by the header row:
//   long:  exactly the columns date, asset, return (any order, names case-insensitive);
//          one row per (date, asset). Any other column is an error rather than silently
//          dropped: an ingest either takes the whole file as meant or nothing.
//          Assets keep the order in which they first appear.
//   wide:  date, then one column per asset; assets keep the header's order.
// Shared rules:
//   - dates are ISO yyyy-mm-dd and must be real calendar dates; rows may come in any
//     order, the panel is sorted ascending; a date twice (wide) or a (date, asset) pair
//     twice (long) is an error naming both lines;
//   - an empty cell, NA or NaN (any case) is a gap and becomes a quiet NaN; a long file
//     may also simply leave the row out; every other cell must be a whole finite number
//     (a leading '+' is accepted, "1.5%" and "inf" are not). Size is not checked: 12.0
//     (1200 %) is read as given;
//   - RFC 4180 basics: fields in double quotes may hold commas, newlines and doubled
//     quotes; spaces and tabs around unquoted fields are ignored; CRLF line ends and a
//     UTF-8 byte-order mark are accepted; blank lines are skipped; lines starting with
//     '#' before the header are comments (our reference files carry their provenance so).
// Errors throw InputError naming file, line and column.
#pragma once

#include <string>

#include "factorwatch/engine/panel.h"

namespace factorwatch::storage {

enum class ValuesInFile { returns, prices_to_simple_returns, prices_to_log_returns };
struct ReturnsReadOptions { ValuesInFile values = ValuesInFile::returns; };
struct ReturnsFile {
  engine::ReturnsPanel panel;
  std::string layout;
  std::size_t data_rows = 0;
  std::size_t values_present = 0;
};
ReturnsFile read_returns_file(const std::string& path, const ReturnsReadOptions& options);

engine::ReturnsPanel read_returns_csv(const std::string& path);

}  // namespace factorwatch::storage
