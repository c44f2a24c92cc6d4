#include "factorwatch/storage/identifier_rule.h"

#include <cstdio>

#include "cell_parse.h"
#include "factorwatch/storage/input_error.h"
#include "utf8_check.h"

namespace factorwatch::storage {
namespace {

// One character of well-formed UTF-8 text at `at`: its code point and byte length.
struct Character {
  char32_t code = 0;
  std::size_t length = 1;
};

// Reads the character at `at` when its bytes are well-formed UTF-8, else nullopt.
std::optional<Character> character_at(std::string_view text, std::size_t at) {
  const auto lead = static_cast<unsigned char>(text[at]);
  if (lead < 0x80) return Character{lead, 1};
  // first_invalid_utf8 says 0 exactly when the sequence starting here is malformed.
  const std::string_view window = text.substr(at, 4);
  if (auto bad = detail::first_invalid_utf8(window); bad && *bad == 0) return std::nullopt;
  const std::size_t length = lead < 0xE0 ? 2 : lead < 0xF0 ? 3 : 4;
  char32_t code = lead & (lead < 0xE0 ? 0x1F : lead < 0xF0 ? 0x0F : 0x07);
  for (std::size_t k = 1; k < length; ++k) code = (code << 6) | (static_cast<unsigned char>(text[at + k]) & 0x3F);
  return Character{code, length};
}

bool is_control(char32_t c) { return c < 0x20 || c == 0x7F || (c >= 0x80 && c <= 0x9F); }

bool is_invisible_format(char32_t c) {
  return (c >= 0x200B && c <= 0x200F) || c == 0x2028 || c == 0x2029 || (c >= 0x202A && c <= 0x202E) ||
         (c >= 0x2066 && c <= 0x2069) || c == 0xFEFF;
}

bool is_edge_space(char32_t c) { return c == 0x20 || c == 0xA0; }

std::string code_point(char32_t c) {
  char text[16];
  std::snprintf(text, sizeof text, "U+%04X", static_cast<unsigned>(c));
  return text;
}

}  // namespace

std::optional<std::string> identifier_problem(std::string_view name) {
  if (name.empty()) return "is empty";
  if (auto bad = detail::first_invalid_utf8(name)) {
    const std::string words = detail::invalid_utf8_problem("", name, *bad);  // " is not valid UTF-8 (...)..."
    return words.substr(1);
  }
  for (std::size_t at = 0; at < name.size();) {
    const Character c = *character_at(name, at);
    auto where = [&] { return " (" + code_point(c.code) + ") at position " + std::to_string(at + 1); };
    if (is_control(c.code))
      return detail::quoted(name) + " holds a control character" + where() +
             ": names are printable text, without line breaks, tabs, NUL or terminal codes";
    if (is_invisible_format(c.code))
      return detail::quoted(name) + " holds an invisible formatting character" + where() +
             ": it would make the name print like another one";
    at += c.length;
  }
  const auto first = *character_at(name, 0);
  std::size_t last_at = name.size() - 1;
  while (last_at > 0 && (static_cast<unsigned char>(name[last_at]) & 0xC0) == 0x80) --last_at;
  const auto last = *character_at(name, last_at);
  if (is_edge_space(first.code) || is_edge_space(last.code))
    return detail::quoted(name) + (is_edge_space(first.code) ? " starts" : " ends") +
           " with a space: it would print like the name without it; remove it";
  if (name.size() > kLongestIdentifier)
    return detail::quoted(name) + " is " + std::to_string(name.size()) + " bytes long, more than the limit of " +
           std::to_string(kLongestIdentifier);
  return std::nullopt;
}

void check_identifier(std::string_view name, const std::string& path, std::size_t line, const std::string& field) {
  if (auto problem = identifier_problem(name)) throw InputError(path, line, field, "the asset name " + *problem);
}

std::string printable_text(std::string_view text) {
  static constexpr char kHex[] = "0123456789ABCDEF";
  std::string out;
  out.reserve(text.size());
  for (std::size_t at = 0; at < text.size();) {
    const auto c = character_at(text, at);
    if (!c || c->code < 0x20 || c->code == 0x7F) {  // a malformed byte or a C0 control: \xNN
      const auto byte = static_cast<unsigned char>(text[at]);
      out += {'\\', 'x', kHex[byte >> 4], kHex[byte & 15]};
      ++at;
      continue;
    }
    if (is_control(c->code) || is_invisible_format(c->code)) {  // C1 or invisible: \uNNNN
      char escaped[12];
      std::snprintf(escaped, sizeof escaped, "\\u%04X", static_cast<unsigned>(c->code));
      out += escaped;
    } else {
      out.append(text.substr(at, c->length));
    }
    at += c->length;
  }
  return out;
}

}  // namespace factorwatch::storage
