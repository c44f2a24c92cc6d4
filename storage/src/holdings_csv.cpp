// A holdings file in CSV: the header asset,weight, then one row per asset. The scanner
// and the number rule are the returns reader's, so both kinds of file accept and refuse
// the same things (BOM, CRLF, blank lines, '#' comments before the header, quoting).
#include <unordered_map>

#include "cell_parse.h"
#include "csv_scanner.h"
#include "factorwatch/storage/identifier_rule.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/portfolios.h"
#include "holdings_file.h"
#include "utf8_check.h"

namespace factorwatch::storage::detail {
namespace {

constexpr const char* kHeader = "a holdings CSV file has the header asset,weight";

// Exactly the columns asset and weight, in that order (names case-insensitive, as in a
// returns file). The order is fixed because a file with the two swapped is more likely
// written by hand in a hurry than meant, and a fixed order keeps the rule one sentence.
void check_header(const std::vector<std::string>& names, const std::string& path, std::size_t line) {
  for (std::size_t i = 0; i < names.size(); ++i)
    if (auto bad = first_invalid_utf8(names[i]))
      throw InputError(path, line, "column " + std::to_string(i + 1),
                       invalid_utf8_problem("the column name", names[i], *bad));
  static const char* const kColumns[2] = {"asset", "weight"};
  for (std::size_t i = 0; i < 2; ++i) {
    if (i >= names.size())
      throw InputError(path, line, kColumns[i], std::string("column missing: ") + kHeader);
    if (!same_name(names[i], kColumns[i]))
      throw InputError(path, line, names[i].empty() ? "column " + std::to_string(i + 1) : names[i],
                       "expected '" + std::string(kColumns[i]) + "' as column " + std::to_string(i + 1) +
                           ": " + kHeader);
  }
  if (names.size() > 2)
    throw InputError(path, line, names[2].empty() ? "column 3" : names[2],
                     std::string("unexpected column: ") + kHeader + " (remove the others)");
}

double read_weight(std::string_view cell, const std::string& path, std::size_t line, const std::string& field) {
  double value = 0;
  const Cell kind = parse_cell(cell, value);
  if (kind == Cell::number) {
    if (const std::string problem = weight_problem(value); !problem.empty())
      throw InputError(path, line, field, "the weight " + detail::quoted(cell) + " " + problem);
    return stored_weight(value);
  }
  if (kind == Cell::gap) {
    if (cell.empty())
      throw InputError(path, line, field, "the weight is empty: every holding needs a weight (0 is allowed)");
    throw InputError(path, line, field, detail::quoted(cell) + " is not a number: every holding needs a weight");
  }
  throw InputError(path, line, field, describe_bad_cell(kind, cell));
}

}  // namespace

std::string twice_problem(std::string_view asset, std::size_t first_line, std::size_t line) {
  return "asset " + detail::quoted(asset) + " appears twice (lines " + std::to_string(first_line) + " and " +
         std::to_string(line) + ")";
}

void check_asset_name(std::string_view name, const std::string& path, std::size_t line, const std::string& field) {
  check_identifier(name, path, line, field);
}

HoldingsFile read_holdings_csv(std::string_view text, const std::string& path) {
  CsvScanner scanner(text, path);
  scanner.skip_comments();
  std::vector<std::string_view> fields;
  if (!scanner.next(fields))
    throw InputError(path, 0, "", std::string("the file is empty: no header row and no holdings; ") + kHeader);
  const std::size_t header_line = scanner.line();
  const std::vector<std::string> names(fields.begin(), fields.end());
  check_header(names, path, header_line);
  scanner.set_column_names(&names);

  HoldingsFile file;
  std::unordered_map<std::string, std::size_t> first_line;  // asset -> line it was first on
  while (scanner.next(fields)) {
    const std::size_t line = scanner.line();
    if (fields.size() != 2) {
      const std::string counts = "the row has " + std::to_string(fields.size()) + " fields, the header 2";
      if (fields.size() < 2) throw InputError(path, line, names[1], "missing: " + counts);
      throw InputError(path, line, names[1], "extra fields after this column: " + counts);
    }
    check_asset_name(fields[0], path, line, names[0]);
    const double weight = read_weight(fields[1], path, line, names[1]);
    auto [at, fresh] = first_line.emplace(std::string(fields[0]), line);
    if (!fresh) throw InputError(path, line, names[0], twice_problem(fields[0], at->second, line));
    file.holdings.push_back({at->first, weight});
  }
  if (file.holdings.empty()) throw InputError(path, header_line, "", "no holdings after the header");
  file.end_line = header_line;
  return file;
}

}  // namespace factorwatch::storage::detail
