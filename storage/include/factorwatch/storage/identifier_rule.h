// The one rule for asset identifiers, wherever they come from: returns files (wide
// header, long `asset` column), holdings files (CSV and JSON), model universes, and
// weights sent with a risk request.
//
// An identifier is shown in tables on a terminal, in CSV and JSON, and is a key in the
// database, so two names that print alike must not be two assets, and no name may move
// the cursor or recolour a terminal. A name is refused when it:
//   - is empty;
//   - is not well-formed UTF-8 (utf8_check.h);
//   - holds a control character: NUL and the other C0 controls (U+0000-U+001F: line
//     breaks, tab, ESC that starts terminal codes), DEL (U+007F) or a C1 control
//     (U+0080-U+009F; U+009B starts terminal codes like ESC [ does);
//   - holds an invisible character that changes how text around it is shown: zero-width
//     space, joiners and marks (U+200B-U+200F), line and paragraph separators (U+2028,
//     U+2029), bidirectional embeddings, overrides and isolates (U+202A-U+202E,
//     U+2066-U+2069) and the byte-order mark (U+FEFF): "AB" and "A<U+200B>B" look alike;
//   - starts or ends with a space (U+0020) or a no-break space (U+00A0): unquoted CSV
//     cells are trimmed, so " ZQ" can only arrive quoted or from JSON, and would be a
//     second asset printing like "ZQ";
//   - is longer than kLongestIdentifier bytes.
// Everything else is kept exactly: quotes, commas, semicolons, '/', '\', SQL text and
// non-Latin letters are data (every SQL statement binds its values; CSV output quotes,
// JSON output escapes).
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>

namespace factorwatch::storage {

// 128 bytes: real identifiers are far shorter (ISIN and FIGI 12 characters, CUSIP 9, SEDOL
// 7, exchange tickers with a suffix about 20; a fund's full name about 60), so 128 leaves
// room for composite keys and non-Latin names (42 characters of 3 bytes) while a
// megabyte "name" pasted by mistake is refused rather than stored in every output.
inline constexpr std::size_t kLongestIdentifier = 128;

// Why `name` cannot be an asset identifier, as words to follow "the asset name"
// ("is empty", "'ZQ\x1B' holds a control character (U+001B) at position 3: ..."), or
// nullopt when it can.
std::optional<std::string> identifier_problem(std::string_view name);

// Throws InputError(path, line, field, "the asset name " + problem) when `name` breaks
// the rule.
void check_identifier(std::string_view name, const std::string& path, std::size_t line, const std::string& field);

// The text for a terminal or a message: control characters (C0, DEL, C1), the invisible
// characters above and bytes of malformed UTF-8 are written as \xNN (bytes below 0x80 and
// malformed bytes) or \uNNNN (C1 and the invisible ones); everything else is unchanged.
// For names stored before the rule (an older database) and for cells quoted in messages.
std::string printable_text(std::string_view text);

}  // namespace factorwatch::storage
