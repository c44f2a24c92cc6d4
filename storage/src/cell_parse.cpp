#include "cell_parse.h"

#include <charconv>
#include <cmath>
#include <system_error>

#include "factorwatch/storage/identifier_rule.h"
#include "fast_float/fast_float.h"
#include "utf8_check.h"

namespace factorwatch::storage::detail {

bool same_name(std::string_view a, std::string_view b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i) {
    char x = a[i], y = b[i];
    if (x >= 'A' && x <= 'Z') x = static_cast<char>(x - 'A' + 'a');
    if (y >= 'A' && y <= 'Z') y = static_cast<char>(y - 'A' + 'a');
    if (x != y) return false;
  }
  return true;
}

Cell parse_cell(std::string_view text, double& value) {
  // NaN is not a gap: fast_float reads it as a number, so it lands in not_finite below.
  if (text.empty() || same_name(text, "na")) return Cell::gap;
  // fast_float rejects a leading '+' (as std::from_chars does); spreadsheets write one.
  if (text.size() > 1 && text.front() == '+' && text[1] != '-' && text[1] != '+')
    text.remove_prefix(1);
  const char* end = text.data() + text.size();
  auto result = fast_float::from_chars(text.data(), end, value);
  if (result.ptr != end) return Cell::not_a_number;
  // Some fast_float versions flag overflow (value inf) and underflow (value 0) as out of
  // range, others do not; either way overflow is "not finite" and underflow reads as 0.
  if (result.ec != std::errc() && result.ec != std::errc::result_out_of_range) return Cell::not_a_number;
  if (!std::isfinite(value)) return Cell::not_finite;
  return Cell::number;
}

std::string describe_bad_cell(Cell kind, std::string_view text) {
  if (kind == Cell::not_finite) return quoted(text) + " is not a finite number";
  return quoted(text) + " is not a number";
}

std::string shortest(double value) {
  char buffer[32];
  const auto result = std::to_chars(buffer, buffer + sizeof buffer, value);
  return std::string(buffer, result.ptr);
}

std::string quoted(std::string_view text) {
  constexpr std::size_t kShown = 40;
  // Messages must stay valid UTF-8 (they end up in JSON) and must not move a terminal's
  // cursor: malformed bytes and control characters are shown escaped (printable_text),
  // and a long cell is cut at a character boundary, never inside one.
  if (text.size() <= kShown) return "'" + printable_text(text) + "'";
  std::size_t cut = kShown;
  while (cut > 0 && (static_cast<unsigned char>(text[cut]) & 0xC0) == 0x80) --cut;
  if (cut == 0) cut = kShown;  // malformed bytes only: printable_text escapes them anyway
  return "'" + printable_text(text.substr(0, cut)) + "...'";
}

}  // namespace factorwatch::storage::detail
