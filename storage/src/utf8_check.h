// Checking that text is well-formed UTF-8 (RFC 3629).
//
// Why: asset names go into JSON reports and, through `factorwatch load`, into a database;
// a name saved in Latin-1 or cut in the middle of a character would break both, so the
// reader refuses it with the place of the first bad byte instead.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>

namespace factorwatch::storage::detail {

// Offset of the first byte that does not belong to a well-formed UTF-8 sequence
// (overlong forms, surrogates and code points above U+10FFFF count as malformed);
// nullopt when the whole text is well-formed.
std::optional<std::size_t> first_invalid_utf8(std::string_view text);

// The problem text for an InputError about a malformed name, e.g.
// "the asset name is not valid UTF-8 (byte 0xE9 at position 4): save the file as UTF-8".
std::string invalid_utf8_problem(std::string_view what, std::string_view text, std::size_t at);

}  // namespace factorwatch::storage::detail
