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

std::optional<std::int32_t> parse_iso_date(std::string_view text) {
  if (text.size() != 10 || text[4] != '-' || text[7] != '-') return std::nullopt;
  auto digits = [&](std::size_t from, std::size_t count) -> int {
    int v = 0;
    for (std::size_t i = from; i < from + count; ++i) {
      if (text[i] < '0' || text[i] > '9') return -1;
      v = v * 10 + (text[i] - '0');
    }
    return v;
  };
  const int year = digits(0, 4), month = digits(5, 2), day = digits(8, 2);
  if (year < 1 || month < 1 || month > 12 || day < 1) return std::nullopt;
  static constexpr int kDays[12] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
  const bool leap = (year % 4 == 0 && year % 100 != 0) || year % 400 == 0;
  const int month_days = kDays[month - 1] + (month == 2 && leap ? 1 : 0);
  if (day > month_days) return std::nullopt;
  return year * 10000 + month * 100 + day;
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
