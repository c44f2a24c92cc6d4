// Reading single cells: numbers, gaps, ISO dates, and quoting a cell in an error message.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>

namespace factorwatch::storage::detail {

enum class Cell { number, gap, not_a_number, not_finite };

// Empty, NA or NaN (any case) is a gap; otherwise the whole cell must be a decimal number
// (fast_float, exact rounding; one leading '+' allowed) and finite.
Cell parse_cell(std::string_view text, double& value);

// The words an error message uses for a cell that is not a usable number.
std::string describe_bad_cell(Cell kind, std::string_view text);

// yyyy-mm-dd naming a real calendar date (proleptic Gregorian, years 0001-9999);
// returns yyyy * 10000 + mm * 100 + dd, which sorts like the dates.
std::optional<std::int32_t> parse_iso_date(std::string_view text);

// The cell in single quotes for a message, shortened when long.
std::string quoted(std::string_view text);

// ASCII case-insensitive comparison, for header names such as "Date" or "RETURN".
bool same_name(std::string_view a, std::string_view b);

}  // namespace factorwatch::storage::detail
