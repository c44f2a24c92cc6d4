#include "text_format.h"

#include <charconv>
#include <cmath>

#include "factorwatch/engine/caution.h"
#include "factorwatch/storage/identifier_rule.h"

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

std::string csv_number(double x) { return std::isfinite(x) ? exact_number(x) : std::string(); }

nlohmann::ordered_json json_number(double x) {
  return std::isfinite(x) ? nlohmann::ordered_json(x) : nlohmann::ordered_json();
}

std::string table_text(const std::string& text) { return storage::printable_text(text); }

std::vector<std::string> split_list(const std::string& text) {
  std::vector<std::string> out;
  std::size_t start = 0;
  while (start <= text.size()) {
    std::size_t end = text.find(',', start);
    if (end == std::string::npos) end = text.size();
    const std::string item = text.substr(start, end - start);
    const auto b = item.find_first_not_of(" \t");
    const auto e = item.find_last_not_of(" \t");
    if (b != std::string::npos) out.push_back(item.substr(b, e - b + 1));
    start = end + 1;
  }
  return out;
}

std::string csv_caution_line() { return std::string("# caution: ") + engine::kCaution + "\n"; }

}  // namespace factorwatch::server
