// Wide layout: date, then one column per asset.
#include <algorithm>
#include <limits>
#include <unordered_map>

#include "cell_parse.h"
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
    if (name.empty())
      throw InputError(header.path, header.line, "column " + std::to_string(j + 1),
                       "asset name is empty");
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

}  // namespace

engine::ReturnsPanel read_wide_returns(CsvScanner& scanner, const ReturnsHeader& header) {
  check_asset_names(header);
  const std::size_t width = header.names.size();
  const std::size_t assets = width - 1;

  std::vector<DateRow> dates;
  std::vector<double> values;  // row-major, file order
  const std::size_t expected_rows = scanner.remaining_lines();
  dates.reserve(expected_rows);
  values.reserve(expected_rows * assets);

  std::vector<std::string_view> fields;
  fields.reserve(width);
  while (scanner.next(fields)) {
    const std::size_t line = scanner.line();
    if (fields.size() != width) wrong_width(header, line, fields.size());
    dates.push_back({read_date(fields[0], header.path, line, header.names[0]), fields[0], line});
    for (std::size_t j = 1; j < width; ++j) {
      double value = 0;
      Cell kind = parse_cell(fields[j], value);
      if (kind == Cell::gap) {
        value = std::numeric_limits<double>::quiet_NaN();
      } else if (kind != Cell::number) {
        throw InputError(header.path, line, header.names[j], describe_bad_cell(kind, fields[j]));
      }
      values.push_back(value);
    }
  }
  if (dates.empty()) throw InputError(header.path, header.line, "", "no data rows after the header");

  const std::vector<std::size_t> order = ascending_dates(dates, header.path, header.names[0]);
  engine::ReturnsPanel panel;
  panel.assets.assign(header.names.begin() + 1, header.names.end());
  panel.dates.reserve(dates.size());
  panel.values.resize(static_cast<Eigen::Index>(dates.size()), static_cast<Eigen::Index>(assets));
  for (std::size_t i = 0; i < order.size(); ++i) {
    panel.dates.emplace_back(dates[order[i]].text);
    std::copy_n(values.data() + order[i] * assets, assets, panel.values.data() + i * assets);
  }
  return panel;
}

}  // namespace factorwatch::storage::detail
