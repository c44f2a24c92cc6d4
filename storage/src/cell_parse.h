// Reading single cells: numbers, gaps, ISO dates, and quoting a cell in an error message.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>

namespace factorwatch::storage::detail {

enum class Cell { number, gap, not_a_number, not_finite };

// Empty or NA (any case) is a gap; otherwise the whole cell must be a decimal number
// (fast_float, exact rounding; one leading '+' allowed) and finite: NaN, inf and
// Infinity (any case, any sign) and overflowing numbers such as 1e999 are not_finite.
Cell parse_cell(std::string_view text, double& value);

// The words an error message uses for a cell that is not a usable number (without advice
// on gaps: what a gap is differs between a returns file and a matrix).
std::string describe_bad_cell(Cell kind, std::string_view text);

// The cell in single quotes for a message, shortened when long; always valid UTF-8.
std::string quoted(std::string_view text);

// A number for a message, in the fewest digits that read back to the same double.
std::string shortest(double value);

// ASCII case-insensitive comparison, for header names such as "Date" or "RETURN".
bool same_name(std::string_view a, std::string_view b);

}  // namespace factorwatch::storage::detail
