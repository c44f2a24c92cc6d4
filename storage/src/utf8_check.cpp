#include "utf8_check.h"

#include <cstdio>
#include <string>

namespace factorwatch::storage::detail {

std::optional<std::size_t> first_invalid_utf8(std::string_view text) {
  const auto* s = reinterpret_cast<const unsigned char*>(text.data());
  const std::size_t n = text.size();
  std::size_t i = 0;
  while (i < n) {
    const unsigned char c = s[i];
    if (c < 0x80) {
      ++i;
      continue;
    }
    // Lead byte: how many continuation bytes follow and the allowed range of the first
    // one (RFC 3629 table 3-7), which is what rules out overlong forms and surrogates.
    std::size_t more = 0;
    unsigned char low = 0x80, high = 0xBF;
    if (c >= 0xC2 && c <= 0xDF) {
      more = 1;
    } else if (c == 0xE0) {
      more = 2, low = 0xA0;
    } else if ((c >= 0xE1 && c <= 0xEC) || c == 0xEE || c == 0xEF) {
      more = 2;
    } else if (c == 0xED) {
      more = 2, high = 0x9F;
    } else if (c == 0xF0) {
      more = 3, low = 0x90;
    } else if (c >= 0xF1 && c <= 0xF3) {
      more = 3;
    } else if (c == 0xF4) {
      more = 3, high = 0x8F;
    } else {
      return i;  // a continuation byte without a lead, or a lead byte UTF-8 never uses
    }
    for (std::size_t k = 1; k <= more; ++k) {
      if (i + k >= n) return i;
      const unsigned char b = s[i + k];
      if (k == 1 ? (b < low || b > high) : (b < 0x80 || b > 0xBF)) return i;
    }
    i += more + 1;
  }
  return std::nullopt;
}

std::string invalid_utf8_problem(std::string_view what, std::string_view text, std::size_t at) {
  char byte[8];
  std::snprintf(byte, sizeof byte, "0x%02X", static_cast<unsigned>(static_cast<unsigned char>(text[at])));
  return std::string(what) + " is not valid UTF-8 (byte " + byte + " at position " +
         std::to_string(at + 1) + "): save the file as UTF-8";
}

}  // namespace factorwatch::storage::detail
