// Wide layout: date, then one column per asset; dates strictly ascending.
#include <algorithm>
#include <unordered_map>

#include "cell_parse.h"
#include "factorwatch/storage/identifier_rule.h"
#include "factorwatch/storage/input_error.h"
#include "returns_layouts.h"

namespace factorwatch::storage::detail {
namespace {

void check_asset_names(const ReturnsHeader& header) {
  if (header.names.size() < 2)
    throw InputError(header.path, header.line, header.names[0], "no asset columns after it");
  std::unordered_map<std::string_view, std::size_t> seen;
  for (std::size_t j = 1; j < header.names.size(); ++j) {
    const std::string& name = header.names[j];
    // Named by position: the name itself may be empty or unprintable.
    check_identifier(name, header.path, header.line, "column " + std::to_string(j + 1));
    auto [at, fresh] = seen.emplace(name, j);
    if (!fresh)
      throw InputError(header.path, header.line, name,
                       "asset name appears twice (columns " + std::to_string(at->second + 1) +
                           " and " + std::to_string(j + 1) + ")");
  }
}

// A row with the wrong number of cells: name the first missing or the last expected column.
[[noreturn]] void wrong_width(const ReturnsHeader& header, std::size_t line, std::size_t got) {
  const std::size_t want = header.names.size();
  const std::string counts = "the row has " + std::to_string(got) + " fields, the header " +
                             std::to_string(want);
  if (got < want) throw InputError(header.path, line, header.names[got], "missing: " + counts);
  throw InputError(header.path, line, header.names.back(), "extra fields after this column: " + counts);
}

// A date not after the row above. Why strict order for wide files: the rows are a time
// series as a person or a spreadsheet wrote it, and one out of place is far more often a
// paste error than a meaning. The rows so far ascend, so a repeat is found by bisection.
[[noreturn]] void out_of_order(const ReturnsHeader& header, const std::vector<DateRow>& dates,
                               const DateRow& row) {
  const auto same = std::lower_bound(dates.begin(), dates.end(), row.date,
                                     [](const DateRow& d, engine::Date date) { return d.date < date; });
  if (same != dates.end() && same->date == row.date)
    throw InputError(header.path, row.line, header.names[0],
                     "date " + std::string(row.text) + " appears twice (lines " +
                         std::to_string(same->line) + " and " + std::to_string(row.line) + ")");
  const DateRow& above = dates.back();
  throw InputError(header.path, row.line, header.names[0],
                   "dates must ascend: " + std::string(row.text) + " on line " + std::to_string(row.line) +
                       " is earlier than " + std::string(above.text) + " on line " +
                       std::to_string(above.line) + " (sort the rows by date)");
}

// Every row of a wide file is one date, so a cell's line is its row's.
class WideLines : public CellLines {
 public:
  WideLines(const ReturnsHeader& header, const std::vector<DateRow>& dates)
      : header_(header), dates_(dates) {}
  std::size_t date_line(std::size_t row) const override { return dates_[row].line; }
  std::size_t cell_line(std::size_t row, std::size_t) const override { return dates_[row].line; }
  const std::string& file_column(std::size_t column) const override { return header_.names[column + 1]; }

 private:
  const ReturnsHeader& header_;
  const std::vector<DateRow>& dates_;
};

}  // namespace

ReturnsFile read_wide_returns(CsvScanner& scanner, const ReturnsHeader& header, ValueRules& rules) {
  check_asset_names(header);
  const std::size_t width = header.names.size();
  const std::size_t assets = width - 1;

  std::vector<DateRow> dates;
  std::vector<double> values;  // row-major, file order (which is date order)
  const std::size_t expected_rows = scanner.remaining_lines();
  dates.reserve(expected_rows);
  values.reserve(expected_rows * assets);

  std::vector<std::string_view> fields;
  fields.reserve(width);
  while (scanner.next(fields)) {
    const std::size_t line = scanner.line();
    if (fields.size() != width) wrong_width(header, line, fields.size());
    const DateRow row{read_date(fields[0], header, line, header.names[0]), fields[0], line};
    if (!dates.empty() && row.date <= dates.back().date) out_of_order(header, dates, row);
    dates.push_back(row);
    for (std::size_t j = 1; j < width; ++j) values.push_back(rules.read(fields[j], line, header.names[j]));
  }
  if (dates.empty()) throw InputError(header.path, header.line, "", "no data rows after the header");

  ReturnsFile file;
  file.data_rows = dates.size();
  engine::ReturnsPanel& panel = file.panel;
  panel.assets.assign(header.names.begin() + 1, header.names.end());
  panel.dates.reserve(dates.size());
  for (const DateRow& d : dates) panel.dates.push_back(d.date);
  panel.values.resize(static_cast<Eigen::Index>(dates.size()), static_cast<Eigen::Index>(assets));
  std::copy(values.begin(), values.end(), panel.values.data());
  std::vector<double>().swap(values);  // a price file makes a second panel next
  rules.finish(panel, WideLines(header, dates), header.names[0]);
  return file;
}

}  // namespace factorwatch::storage::detail
