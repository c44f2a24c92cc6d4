// Reads the header, decides the layout and hands over to the layout's reader.
#include "factorwatch/storage/returns_csv.h"

#include "cell_parse.h"
#include "csv_scanner.h"
#include "factorwatch/storage/input_error.h"
#include "file_text.h"
#include "returns_layouts.h"

namespace factorwatch::storage {
namespace {

constexpr std::size_t kMissing = static_cast<std::size_t>(-1);

std::size_t find_column(const std::vector<std::string>& names, std::string_view wanted) {
  for (std::size_t i = 0; i < names.size(); ++i)
    if (detail::same_name(names[i], wanted)) return i;
  return kMissing;
}

}  // namespace

engine::ReturnsPanel read_returns_csv(const std::string& path) {
  detail::FileText file(path);
  detail::CsvScanner scanner(file.text(), path);
  scanner.skip_comments();
  std::vector<std::string_view> fields;
  if (!scanner.next(fields))
    throw InputError(path, 0, "", "the file has no header row (expected date,asset,return or date,<asset>,...)");

  detail::ReturnsHeader header{path, file.text(), {}, scanner.line()};
  header.names.assign(fields.begin(), fields.end());
  scanner.set_column_names(&header.names);

  // Long when the header names both 'asset' and 'return'; anything else must be wide.
  const std::size_t asset_col = find_column(header.names, "asset");
  const std::size_t return_col = find_column(header.names, "return");
  const std::size_t date_col = find_column(header.names, "date");
  if (asset_col != kMissing && return_col != kMissing) {
    if (date_col == kMissing)
      throw InputError(path, header.line, "date",
                       "column missing: a long returns file has the columns date, asset, return");
    for (std::size_t i = 0; i < header.names.size(); ++i)
      if (i != date_col && i != asset_col && i != return_col)
        throw InputError(path, header.line, header.names[i],
                         "unexpected column: a long returns file has exactly the columns date, "
                         "asset, return (remove the others)");
    return detail::read_long_returns(scanner, header, date_col, asset_col, return_col);
  }
  if (date_col != 0)
    throw InputError(path, header.line, header.names[0],
                     "the first column must be 'date' (wide layout: date,<asset>,<asset>,...; "
                     "long layout: date,asset,return)");
  return detail::read_wide_returns(scanner, header);
}

// Temporary: replaced by the validating reader of branch ingest-validation.
ReturnsFile read_returns_file(const std::string& path, const ReturnsReadOptions&) {
  ReturnsFile f;
  f.panel = read_returns_csv(path);
  f.layout = "unknown";
  return f;
}

}  // namespace factorwatch::storage
