// Long layout: one row per (date, asset) with columns date, asset, return.
#include <algorithm>
#include <limits>
#include <unordered_map>

#include "cell_parse.h"
#include "factorwatch/storage/identifier_rule.h"
#include "factorwatch/storage/input_error.h"
#include "returns_layouts.h"

namespace factorwatch::storage::detail {
namespace {

// One data row, 16 bytes: 7.5 million rows stay near 120 MB.
struct Entry {
  std::int32_t date;   // index into the dates in order of first appearance
  std::int32_t asset;  // index into the assets in order of first appearance
  double value;        // NaN for an explicit gap
};

// Line of the k-th data row (0-based). Only for error messages, so it reads the text again
// rather than storing a line per row.
std::size_t line_of_row(const ReturnsHeader& header, std::size_t k) {
  CsvScanner again(header.text, header.path);
  again.skip_comments();
  std::vector<std::string_view> fields;
  again.next(fields);  // the header
  for (std::size_t i = 0; i <= k; ++i) again.next(fields);
  return again.line();
}

[[noreturn]] void duplicate(const ReturnsHeader& header, const std::vector<Entry>& entries,
                            std::size_t later, const std::vector<std::string>& assets,
                            const std::vector<DateRow>& dates, std::size_t asset_col) {
  const Entry& e = entries[later];
  std::size_t earlier = 0;
  while (entries[earlier].date != e.date || entries[earlier].asset != e.asset) ++earlier;
  const std::size_t first_line = line_of_row(header, earlier);
  const std::size_t second_line = line_of_row(header, later);
  throw InputError(header.path, second_line, header.names[asset_col],
                   "asset " + quoted(assets[static_cast<std::size_t>(e.asset)]) + " on " +
                       std::string(dates[static_cast<std::size_t>(e.date)].text) +
                       " appears twice (lines " + std::to_string(first_line) + " and " +
                       std::to_string(second_line) + ")");
}

// A cell's line is found by looking for its entry and reading the text again up to it.
class LongLines : public CellLines {
 public:
  LongLines(const ReturnsHeader& header, std::size_t value_col, const std::vector<Entry>& entries,
            const std::vector<DateRow>& dates, const std::vector<std::size_t>& order)
      : header_(header), value_col_(value_col), entries_(entries), dates_(dates), order_(order) {}

  std::size_t date_line(std::size_t row) const override { return dates_[order_[row]].line; }

  std::size_t cell_line(std::size_t row, std::size_t column) const override {
    const auto date = static_cast<std::int32_t>(order_[row]);
    const auto asset = static_cast<std::int32_t>(column);
    std::size_t k = 0;
    while (entries_[k].date != date || entries_[k].asset != asset) ++k;
    return line_of_row(header_, k);
  }

  const std::string& file_column(std::size_t) const override { return header_.names[value_col_]; }

 private:
  const ReturnsHeader& header_;
  std::size_t value_col_;
  const std::vector<Entry>& entries_;
  const std::vector<DateRow>& dates_;
  const std::vector<std::size_t>& order_;
};

}  // namespace

ReturnsFile read_long_returns(CsvScanner& scanner, const ReturnsHeader& header, ValueRules& rules,
                              std::size_t date_col, std::size_t asset_col, std::size_t return_col) {
  // Views into the file's text: no string per row, only one per distinct asset at the end.
  std::unordered_map<std::string_view, std::int32_t> asset_index;
  std::unordered_map<std::int32_t, std::int32_t> date_index;  // by day count
  std::vector<std::string> assets;
  std::vector<DateRow> dates;
  std::vector<Entry> entries;
  entries.reserve(scanner.remaining_lines());

  std::int32_t date = 0, asset = 0;  // of the previous row
  std::vector<std::string_view> fields;
  while (scanner.next(fields)) {
    const std::size_t line = scanner.line();
    if (fields.size() != 3) {
      const std::string counts = "the row has " + std::to_string(fields.size()) + " fields, the header 3";
      if (fields.size() < 3) throw InputError(header.path, line, header.names[fields.size()], "missing: " + counts);
      throw InputError(header.path, line, header.names[2], "extra fields after this column: " + counts);
    }
    // Files are usually date-major (one date's rows together, assets in a steady order) or
    // asset-major. Checking the expected date and asset first skips the hash lookups for
    // nearly every row; unordered_map::emplace would also allocate a node per call.
    const std::string_view date_text = fields[date_col];
    if (dates.empty() || date_text != dates[static_cast<std::size_t>(date)].text) {
      const engine::Date day = read_date(date_text, header, line, header.names[date_col]);
      auto found = date_index.find(day.days());
      if (found == date_index.end()) {
        found = date_index.emplace(day.days(), static_cast<std::int32_t>(dates.size())).first;
        dates.push_back({day, date_text, line});
      }
      date = found->second;
    }

    // A name is checked (identifier_rule.h) when first seen; later rows match a checked one.
    const std::string_view asset_text = fields[asset_col];
    const std::size_t next = static_cast<std::size_t>(asset) + 1;
    if (next < assets.size() && assets[next] == asset_text) {
      asset = static_cast<std::int32_t>(next);
    } else if (assets.empty() || assets[static_cast<std::size_t>(asset)] != asset_text) {
      auto found = asset_index.find(asset_text);
      if (found == asset_index.end()) {
        check_identifier(asset_text, header.path, line, header.names[asset_col]);
        assets.emplace_back(asset_text);
        found = asset_index.emplace(asset_text, static_cast<std::int32_t>(assets.size() - 1)).first;
      }
      asset = found->second;
    }

    entries.push_back({date, asset, rules.read(fields[return_col], line, header.names[return_col])});
  }
  if (entries.empty()) throw InputError(header.path, header.line, "", "no data rows after the header");

  const std::vector<std::size_t> order = ascending_order(dates);
  std::vector<std::size_t> row_of(dates.size());
  for (std::size_t i = 0; i < order.size(); ++i) row_of[order[i]] = i;

  const std::size_t width = assets.size();
  ReturnsFile file;
  file.data_rows = entries.size();
  engine::ReturnsPanel& panel = file.panel;
  panel.values.setConstant(static_cast<Eigen::Index>(dates.size()), static_cast<Eigen::Index>(width),
                           std::numeric_limits<double>::quiet_NaN());
  std::vector<std::uint8_t> filled(dates.size() * width, 0);  // an explicit gap is filled too
  for (std::size_t k = 0; k < entries.size(); ++k) {
    const std::size_t cell = row_of[static_cast<std::size_t>(entries[k].date)] * width +
                             static_cast<std::size_t>(entries[k].asset);
    if (filled[cell]) duplicate(header, entries, k, assets, dates, asset_col);
    filled[cell] = 1;
    panel.values.data()[cell] = entries[k].value;
  }
  std::vector<std::uint8_t>().swap(filled);  // a price file makes a second panel next
  panel.assets = std::move(assets);
  panel.dates.reserve(dates.size());
  for (std::size_t i : order) panel.dates.push_back(dates[i].date);
  rules.finish(panel, LongLines(header, return_col, entries, dates, order), header.names[date_col]);
  return file;
}

}  // namespace factorwatch::storage::detail
