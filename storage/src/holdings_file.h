// The two formats of a holdings file (portfolios.h), read into holdings plus what the
// file itself says about the date and the benchmark. Options (name, as-of date,
// benchmark from the command line) are applied by the caller, portfolio_file.cpp.
#pragma once

#include <cstddef>
#include <string>
#include <string_view>

#include <optional>

#include "factorwatch/engine/date.h"
#include "factorwatch/engine/risk.h"

namespace factorwatch::storage::detail {

struct HoldingsFile {
  engine::Holdings holdings;  // file order, each asset once, finite weights (-0 read as 0)
  std::optional<engine::Date> as_of;  // JSON only; none when the file gives none
  std::size_t as_of_line = 0;
  std::string benchmark;      // JSON only; "" when the file gives none
  std::size_t benchmark_line = 0;
  std::size_t end_line = 0;   // a line to name for problems of the whole file
};

// CSV with the header asset,weight. `text` is after any byte-order mark.
HoldingsFile read_holdings_csv(std::string_view text, const std::string& path);

// JSON: {"as_of", "benchmark", and "weights" or "holdings"}. `text` starts with '{'
// after blanks and any byte-order mark.
HoldingsFile read_holdings_json(std::string_view text, const std::string& path);

// The rule asset names of returns files follow (identifier_rule.h). Throws InputError
// naming `field` on `line`.
void check_asset_name(std::string_view name, const std::string& path, std::size_t line, const std::string& field);

// A weight as stored: the sign of a zero is dropped (SQLite keeps an integral REAL as an
// integer, which has no -0, so -0 would not read back bit for bit).
inline double stored_weight(double weight) { return weight == 0 ? 0.0 : weight; }

// SHA-256 (hex) of a canonical text of the holdings in order and the benchmark: each
// weight in %.17g (reads back to the same double), names with their length before them
// so that no name, whatever it holds (commas, newlines), can imitate another layout.
std::string holdings_sha256(const engine::Holdings& holdings, const std::string& benchmark);

// "asset 'X' appears twice (lines 3 and 7)": the words of the returns reader.
std::string twice_problem(std::string_view asset, std::size_t first_line, std::size_t line);

}  // namespace factorwatch::storage::detail
