// Reading a returns file (CSV) into a panel of dates by assets.
//
// An ingest takes the whole file as meant or nothing: every rule below rejects the file
// with an InputError naming file, line (1-based, physical) and column, rather than
// guessing or dropping data.
//
// Layouts, told apart by the header row:
//   long:  exactly the columns date, asset, return (any order, names case-insensitive);
//          one row per (date, asset); rows may come in any order (the panel is sorted
//          by date). Any other column is an error rather than silently dropped. A header
//          naming 'asset' but not 'return' (or the other way round) is a long file with
//          a column missing. Assets keep the order in which they first appear.
//   wide:  date, then one column per asset; assets keep the header's order. Dates must
//          strictly ascend from row to row: a date earlier than the row above is an
//          error naming both lines ("dates must ascend ..."), so is a date given twice.
//   A header that is neither ("unknown layout") is an error that lists both layouts.
// Shared rules:
//   - the file must hold a header row ("the file is empty" otherwise: zero bytes, or only
//     a byte-order mark, blank lines and comments) and at least one data row after it
//     ("no data rows");
//   - dates are ISO yyyy-mm-dd and must be real calendar dates; a date twice (wide) or a
//     (date, asset) pair twice (long) is an error naming both lines;
//   - the calendar: a date on a Saturday or a Sunday is refused, unless the file declares
//     a calendar with weekends by the comment line "# calendar: all days" before the
//     header (a market that trades on weekends; "# calendar: weekdays" states the default).
//     A weekend row in a file of weekday markets is a stray row (a date typed wrong, a
//     feed that wrote a non-trading day), and stored it would end windows on days no
//     market traded. Another "# calendar:" value, or two declarations, is an error naming
//     the comment's line; other comment lines are free text;
//   - a date after ReturnsReadOptions::latest_date (by default the latest date begun
//     anywhere on earth, timestamps.h) is refused: it cannot have been traded yet, and
//     stored it would become every model's latest window;
//   - column names and asset names must be valid UTF-8 (they end up in JSON and SQL);
//   - an empty cell or NA (any case; R writes it) is a gap and becomes a quiet NaN; a
//     long file may also simply leave the row out. Every other cell must be a whole
//     finite number (a leading '+' is accepted, "1.5%" is not). NaN, inf and Infinity
//     (any case or sign) are rejected: a missing value is written as an empty cell, so a
//     NaN left by a failed computation upstream is never mistaken for a gap;
//   - RFC 4180 basics: fields in double quotes may hold commas, newlines and doubled
//     quotes; spaces and tabs around unquoted fields are ignored; CRLF line ends and a
//     UTF-8 byte-order mark are accepted; blank lines are skipped; lines starting with
//     '#' before the header are comments (our reference files carry their provenance so),
//     while an unquoted '#' line after it is an error ("a comment line among the data");
//     rows must have as many fields as the header.
// Returns (ValuesInFile::returns) are simple or log returns as fractions (0.01 is 1 %):
//   - a return at or below -1 (-100 %) is rejected: a price cannot fall to zero or below.
//     The reader cannot tell log from simple returns and applies this to both: a log
//     return at or below -1 (a fall of 63 % or more in one period) is refused too. Such a
//     fall is rare but real (a collapse on bankruptcy news); a file holding one must be
//     given as simple returns or as prices;
//   - a return above kLargestReturn (+10, i.e. +1000 % in one period) is rejected, with a
//     hint that a file in percent must be converted to fractions;
//   - a file with at least kPercentCheckMinValues present values whose median absolute
//     return (the lower median when the count is even, i.e. more than half of the values
//     exceed the limit) is above kPercentMedianLimit (0.25) "looks like percent" and is
//     rejected, naming the first value above 0.25 in file order. Real daily, weekly or
//     monthly returns have a median size of a few percent at most (common practice).
// Prices (ValuesInFile::prices_to_simple_returns, prices_to_log_returns):
//   - every present cell is a price and must be above 0;
//   - the return on date t is p_t / p_{t-1} - 1 (simple) or log(p_t / p_{t-1}) (log),
//     where t-1 is the previous date of the file (all its dates, ascending), not the
//     asset's own previous price: a price missing on date t leaves the returns on t and
//     on the next date missing, and they resume on the date after that;
//   - the first date of the file therefore yields no returns and is left out of the
//     panel: include the previous date's prices in each file. A file with a single date
//     is rejected ("a price file needs at least two dates");
//   - the +1000 % limit applies to the price ratio (for log returns too: a price 11
//     times the previous one is as implausible either way), naming the later price's line;
//     the percent rule does not apply.
// The file as a whole (file_text.h):
//   - it is read exactly once, also from a pipe or /dev/stdin, and its content hash
//     (ReturnsFile::content_sha256) is computed from those same bytes;
//   - a NUL byte anywhere is refused, naming its line: CSV text never holds one (a binary
//     file, or a file saved as UTF-16, does);
//   - it may be at most ReturnsReadOptions::max_input_bytes long (kLargestInputBytes).
// Errors throw InputError naming file, line and column.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>

#include "factorwatch/engine/panel.h"

namespace factorwatch::storage {

// Largest return accepted in one period: +1000 %. Beyond it the file is far more likely
// in percent, or a price series has a unit change, than a real one-period gain (common
// practice for ingest checks).
inline constexpr double kLargestReturn = 10.0;

// The percent rule: a file whose median absolute return exceeds this (25 % per period)
// is taken to be written in percent. Checked only with enough values for a median to mean
// something.
inline constexpr double kPercentMedianLimit = 0.25;
inline constexpr std::size_t kPercentCheckMinValues = 100;

// The largest input file read by default: 2 GiB. The widest panel we plan for, 20,000
// assets x 2,500 dates, is about 0.55 GB as a wide CSV and about 1.6 GB in the long layout
// (about 30 bytes a row), so real files fit with room; an endless stream (/dev/zero, a
// pipe that never closes) is refused at this size rather than eating the machine's memory.
// `factorwatch load --max-input-mb` sets another limit.
inline constexpr std::size_t kLargestInputBytes = std::size_t{2048} << 20;

// What the numbers in the file are.
enum class ValuesInFile { returns, prices_to_simple_returns, prices_to_log_returns };

struct ReturnsReadOptions {
  ReturnsReadOptions() = default;
  // Implicit, so that `{ValuesInFile::prices_to_simple_returns}` reads as the options.
  ReturnsReadOptions(ValuesInFile v) : values(v) {}  // NOLINT(google-explicit-constructor)

  ValuesInFile values = ValuesInFile::returns;
  std::size_t max_input_bytes = kLargestInputBytes;  // read_returns_file only
  // The latest date a file may hold; none: latest_date_begun() when the file is read.
  std::optional<engine::Date> latest_date;
};

struct ReturnsFile {
  engine::ReturnsPanel panel;      // returns (converted when the file held prices), dates ascending
  std::string layout;              // "long" or "wide"
  std::size_t data_rows = 0;       // data records read after the header
  std::size_t values_present = 0;  // non-missing returns in the panel
  bool weekends = false;           // the file declared "# calendar: all days"
  // SHA-256 (hex) of every byte read, a byte-order mark included: what `sha256sum FILE`
  // prints for the file (for text in memory, of that text). Computed from the one read.
  std::string content_sha256;
};

ReturnsFile read_returns_file(const std::string& path, const ReturnsReadOptions& options);

// The same rules for a file's content already in memory (an HTTP upload): `name` stands
// for the path in every message. A leading UTF-8 byte-order mark is skipped.
ReturnsFile read_returns_text(std::string_view text, const std::string& name, const ReturnsReadOptions& options);

// A file of returns: read_returns_file(path, {}).panel.
engine::ReturnsPanel read_returns_csv(const std::string& path);

}  // namespace factorwatch::storage
