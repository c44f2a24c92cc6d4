#include "text_format.h"

#include <charconv>

#include "factorwatch/engine/caution.h"

namespace factorwatch::server {

std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\r\n") == std::string::npos) return text;
  std::string out = "\"";
  for (char c : text) {
    if (c == '"') out += '"';
    out += c;
  }
  return out + "\"";
}

void append_exact_number(std::string& out, double x) {
  char text[32];
  const auto end = std::to_chars(text, text + sizeof text, x).ptr;
  out.append(text, end);
}

std::string exact_number(double x) {
  std::string out;
  append_exact_number(out, x);
  return out;
}

std::string csv_caution_line() { return std::string("# caution: ") + engine::kCaution + "\n"; }

}  // namespace factorwatch::server
