// Where a panel's cells came from in the file, for error messages about values that are
// only judged once the whole file is read (the percent rule, returns from prices).
#pragma once

#include <cstddef>
#include <string>

namespace factorwatch::storage::detail {

// Rows are the panel's (ascending dates). A layout may find a line slowly, e.g. by
// reading the text again: this only runs on the way to an error.
class CellLines {
 public:
  virtual ~CellLines() = default;
  // A line holding this date (its first, in a long file).
  virtual std::size_t date_line(std::size_t row) const = 0;
  // The line of the cell (row, column); the cell must be present.
  virtual std::size_t cell_line(std::size_t row, std::size_t column) const = 0;
  // The header of the file column holding the panel's column: the asset itself in a wide
  // file, the value column in a long one.
  virtual const std::string& file_column(std::size_t column) const = 0;
};

}  // namespace factorwatch::storage::detail
