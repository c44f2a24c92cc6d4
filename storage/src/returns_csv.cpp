// Reads the header, decides the layout and hands over to the layout's reader.
#include "factorwatch/storage/returns_csv.h"

#include <future>

#include "cell_parse.h"
#include "csv_scanner.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/timestamps.h"
#include "file_text.h"
#include "returns_layouts.h"
#include "returns_values.h"
#include "sha256.h"
#include "utf8_check.h"

namespace factorwatch::storage {
namespace {

constexpr std::size_t kMissing = static_cast<std::size_t>(-1);
constexpr const char* kLayouts =
    "a returns file is either long, header date,asset,return, or wide, header date,<asset>,<asset>,...";

std::size_t find_column(const std::vector<std::string>& names, std::string_view wanted) {
  for (std::size_t i = 0; i < names.size(); ++i)
    if (detail::same_name(names[i], wanted)) return i;
  return kMissing;
}

// Column names end up in messages, reports and the database: refuse malformed UTF-8 here,
// naming the column by position since its name cannot be shown.
void check_names_are_utf8(const detail::ReturnsHeader& header) {
  for (std::size_t i = 0; i < header.names.size(); ++i)
    if (auto bad = detail::first_invalid_utf8(header.names[i]))
      throw InputError(header.path, header.line, "column " + std::to_string(i + 1),
                       detail::invalid_utf8_problem("the column name", header.names[i], *bad));
}

// The calendar a file declares among the comments before its header (returns_csv.h).
bool declares_weekends(const std::vector<detail::CsvScanner::Comment>& comments, const std::string& path) {
  constexpr std::string_view kKey = "calendar";
  std::optional<std::size_t> declared_on;
  bool weekends = false;
  for (const auto& comment : comments) {
    std::string_view text = comment.text;
    if (text.size() < kKey.size() || !detail::same_name(text.substr(0, kKey.size()), kKey)) continue;
    text.remove_prefix(kKey.size());
    while (!text.empty() && (text.front() == ' ' || text.front() == '\t')) text.remove_prefix(1);
    if (text.empty() || text.front() != ':') continue;  // prose that starts with the word
    text.remove_prefix(1);
    while (!text.empty() && (text.front() == ' ' || text.front() == '\t')) text.remove_prefix(1);
    if (declared_on)
      throw InputError(path, comment.line, "",
                       "the calendar is declared twice (lines " + std::to_string(*declared_on) + " and " +
                           std::to_string(comment.line) + "); keep one declaration");
    declared_on = comment.line;
    if (detail::same_name(text, "all days")) weekends = true;
    else if (detail::same_name(text, "weekdays")) weekends = false;
    else
      throw InputError(path, comment.line, "",
                       "unknown calendar " + detail::quoted(text) +
                           ": a returns file declares '# calendar: weekdays' (the default) or '# calendar: all days'");
  }
  return weekends;
}

ReturnsFile read_layout(detail::CsvScanner& scanner, const detail::ReturnsHeader& header,
                        detail::ValueRules& rules) {
  const std::string& path = header.path;
  const std::size_t asset_col = find_column(header.names, "asset");
  const std::size_t return_col = find_column(header.names, "return");
  const std::size_t date_col = find_column(header.names, "date");
  // 'asset' or 'return' in the header means long: a wide file with assets named so is
  // far less likely than a long file with a column misnamed.
  if (asset_col != kMissing || return_col != kMissing) {
    const char* missing = date_col == kMissing ? "date" : asset_col == kMissing ? "asset"
                                                 : return_col == kMissing ? "return" : nullptr;
    if (missing != nullptr)
      throw InputError(path, header.line, missing,
                       "column missing: a long returns file has the columns date, asset, return");
    for (std::size_t i = 0; i < header.names.size(); ++i)
      if (i != date_col && i != asset_col && i != return_col)
        throw InputError(path, header.line, header.names[i],
                         "unexpected column: a long returns file has exactly the columns date, "
                         "asset, return (remove the others)");
    ReturnsFile file = detail::read_long_returns(scanner, header, rules, date_col, asset_col, return_col);
    file.layout = "long";
    return file;
  }
  if (date_col != 0)
    throw InputError(path, header.line, header.names[0],
                     std::string("unknown layout: the first column must be 'date'; ") + kLayouts);
  ReturnsFile file = detail::read_wide_returns(scanner, header, rules);
  file.layout = "wide";
  return file;
}

ReturnsFile parse_returns_text(std::string_view text, const std::string& path, const ReturnsReadOptions& options) {
  detail::check_no_nul(text, path);  // a file was checked as read; an upload is checked here
  constexpr std::string_view kBom = "\xEF\xBB\xBF";
  if (text.substr(0, kBom.size()) == kBom) text.remove_prefix(kBom.size());
  detail::CsvScanner scanner(text, path);
  std::vector<detail::CsvScanner::Comment> comments;
  scanner.skip_comments(&comments);
  const bool weekends = declares_weekends(comments, path);
  std::vector<std::string_view> fields;
  if (!scanner.next(fields)) {
    if (text.empty())
      throw InputError(path, 0, "", std::string("the file is empty: no header row and no data; ") + kLayouts);
    throw InputError(path, 0, "", std::string("the file is empty: only comments and blank lines, no header "
                                              "row; ") + kLayouts);
  }

  detail::ReturnsHeader header{path, text, {}, scanner.line(), {weekends, options.latest_date ? *options.latest_date : latest_date_begun()}};
  header.names.assign(fields.begin(), fields.end());
  scanner.set_column_names(&header.names);
  check_names_are_utf8(header);

  detail::ValueRules rules(path, options.values);
  ReturnsFile result = read_layout(scanner, header, rules);
  const auto& values = result.panel.values;
  result.values_present = static_cast<std::size_t>(values.size() - values.array().isNaN().count());
  result.weekends = weekends;
  return result;
}

}  // namespace

ReturnsFile read_returns_file(const std::string& path, const ReturnsReadOptions& options) {
  const detail::FileText file(path, options.max_input_bytes);
  return read_returns_text(file.bytes(), path, options);
}

ReturnsFile read_returns_text(std::string_view text, const std::string& path, const ReturnsReadOptions& options) {
  // The content hash from the same bytes in memory (never by reading the path again: see
  // file_text.h). A large file is hashed on the other core while this one parses (a
  // rejected file waits for the hash in the future's destructor); a small one after
  // parsing, since starting a thread costs more than hashing it (a fuzz run of this
  // reader was about 9 times slower with a thread per call).
  constexpr std::size_t kHashOnAnotherThreadFrom = std::size_t{1} << 20;
  std::future<std::string> hash;
  if (text.size() >= kHashOnAnotherThreadFrom)
    hash = std::async(std::launch::async, [text] { return detail::sha256_hex(text); });
  ReturnsFile result = parse_returns_text(text, path, options);
  result.content_sha256 = hash.valid() ? hash.get() : detail::sha256_hex(text);
  return result;
}

engine::ReturnsPanel read_returns_csv(const std::string& path) { return read_returns_file(path, {}).panel; }

}  // namespace factorwatch::storage
