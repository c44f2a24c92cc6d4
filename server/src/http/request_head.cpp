#include "request_head.h"

namespace factorwatch::server {
namespace {

HeadCheck refuse(int status, std::string detail, std::string field = "") {
  HeadCheck c;
  c.state = HeadCheck::State::refused;
  c.status = status;
  c.detail = std::move(detail);
  c.field = std::move(field);
  return c;
}

// RFC 9110 section 5.6.2: token characters, the only ones allowed in a method or a
// field name.
bool is_token_char(unsigned char c) {
  if (c >= '0' && c <= '9') return true;
  if ((c | 0x20) >= 'a' && (c | 0x20) <= 'z') return true;
  switch (c) {
    case '!': case '#': case '$': case '%': case '&': case '\'': case '*': case '+':
    case '-': case '.': case '^': case '_': case '`': case '|': case '~':
      return true;
    default:
      return false;
  }
}

// Control bytes have no place in a head (a field value may hold tabs; RFC 9110 section
// 5.5). A NUL or a bare CR in particular is how smuggled requests are built.
bool has_control_byte(std::string_view s) {
  for (unsigned char c : s)
    if ((c < 0x20 && c != '\t') || c == 0x7f) return true;
  return false;
}

bool equals_ignoring_case(std::string_view a, std::string_view b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i)
    if ((static_cast<unsigned char>(a[i]) | 0x20) != (static_cast<unsigned char>(b[i]) | 0x20)) return false;
  return true;
}

std::string_view trim(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
  return s;
}

std::size_t count_ranges(std::string_view value) {
  std::size_t ranges = 1;
  for (char c : value) ranges += c == ',';
  return ranges;
}

// METHOD SP request-target SP HTTP-version (RFC 9112 section 3), ASCII only: a raw
// byte above 0x7f in the target must be percent-encoded by the client.
HeadCheck check_request_line(std::string_view line) {
  const std::size_t first = line.find(' ');
  const std::size_t last = line.rfind(' ');
  if (first == std::string_view::npos || first == last || first == 0)
    return refuse(400, "the request line is not 'METHOD TARGET HTTP/1.1'");
  for (unsigned char c : line.substr(0, first))
    if (!is_token_char(c)) return refuse(400, "the request line's method holds a character a method cannot hold");
  const std::string_view target = line.substr(first + 1, last - first - 1);
  if (target.empty()) return refuse(400, "the request line has no target");
  for (unsigned char c : target)
    if (c <= 0x20 || c >= 0x7f)
      return refuse(400, "the request target holds a space, a control byte or a byte above 0x7f (percent-encode it)");
  const std::string_view version = line.substr(last + 1);
  if (version != "HTTP/1.1" && version != "HTTP/1.0")
    return refuse(400, "the request line's version is not HTTP/1.1 or HTTP/1.0");
  return {};
}

}  // namespace

HeadCheck check_request_head(std::string_view b, const HeadLimits& limits) {
  std::size_t pos = 0;
  for (int empty = 0; pos < b.size() && (b[pos] == '\r' || b[pos] == '\n'); ++empty) {
    if (empty >= 8) return refuse(400, "the request begins with more than four empty lines");
    ++pos;
  }
  if (pos >= b.size()) return {};
  std::size_t fields = 0;
  for (std::size_t line_number = 0;; ++line_number) {
    const bool request_line = line_number == 0;
    const std::size_t line_limit = request_line ? limits.request_line_bytes : limits.field_line_bytes;
    const std::size_t newline = b.find('\n', pos);
    const std::size_t end_of_text = newline == std::string_view::npos ? b.size() : newline;
    std::string_view line = b.substr(pos, end_of_text - pos);
    if (newline != std::string_view::npos && !line.empty() && line.back() == '\r') line.remove_suffix(1);
    const std::size_t line_limit_text = line_limit;
    if (line.size() > line_limit) {
      if (request_line)
        return refuse(414, "the request line is longer than " + std::to_string(line_limit_text) + " bytes");
      return refuse(431, "a header field line is longer than " + std::to_string(line_limit_text) + " bytes");
    }
    const std::size_t head_so_far = newline == std::string_view::npos ? b.size() : newline + 1;
    if (head_so_far > limits.head_bytes)
      return refuse(431, "the request head (request line and header fields) is longer than " +
                             std::to_string(limits.head_bytes) + " bytes");
    // A line still arriving is checked only for its length and its bytes.
    std::string_view checked = line;
    if (newline == std::string_view::npos && !checked.empty() && checked.back() == '\r') checked.remove_suffix(1);
    if (has_control_byte(checked))
      return refuse(400, request_line ? "the request line holds a control byte"
                                      : "a header field holds a control byte (a NUL, a bare CR or another)");
    if (newline == std::string_view::npos) return {};

    if (request_line) {
      if (HeadCheck c = check_request_line(line); c.state == HeadCheck::State::refused) return c;
    } else if (line.empty()) {
      HeadCheck done;
      done.state = HeadCheck::State::complete;
      done.length = newline + 1;
      return done;
    } else {
      // RFC 9112 section 5.2: a server may refuse obsolete line folding with a 400.
      if (line.front() == ' ' || line.front() == '\t')
        return refuse(400, "a header field line begins with white space (obsolete line folding)");
      const std::size_t colon = line.find(':');
      if (colon == std::string_view::npos || colon == 0)
        return refuse(400, "a header field line is not 'name: value'");
      const std::string_view name = line.substr(0, colon);
      for (unsigned char c : name)
        if (!is_token_char(c))
          return refuse(400, "a header field name holds a character a name cannot hold (white space before the "
                             "colon is refused by RFC 9112 section 5.1)");
      if (++fields > limits.field_count)
        return refuse(431, "the request has more than " + std::to_string(limits.field_count) + " header fields");
      if (equals_ignoring_case(name, "Range") && count_ranges(trim(line.substr(colon + 1))) > limits.ranges)
        return refuse(416, "header 'Range': at most " + std::to_string(limits.ranges) + " byte range per request",
                      "Range");
    }
    pos = newline + 1;
  }
}

}  // namespace factorwatch::server
