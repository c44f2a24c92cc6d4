#include "csv_scanner.h"

#include <algorithm>
#include <cstring>

#include "factorwatch/storage/input_error.h"

namespace factorwatch::storage::detail {
namespace {

bool is_padding(char c) { return c == ' ' || c == '\t' || c == '\r'; }

std::string_view trim(std::string_view s) {
  while (!s.empty() && is_padding(s.front())) s.remove_prefix(1);
  while (!s.empty() && is_padding(s.back())) s.remove_suffix(1);
  return s;
}

}  // namespace

CsvScanner::CsvScanner(std::string_view text, const std::string& path) : text_(text), path_(path) {}

void CsvScanner::skip_comments(std::vector<Comment>* comments) {
  while (pos_ < text_.size()) {
    std::size_t end = text_.find('\n', pos_);
    if (end == std::string_view::npos) end = text_.size();
    std::string_view line = trim(text_.substr(pos_, end - pos_));
    if (!line.empty() && line.front() != '#') return;
    if (comments != nullptr && !line.empty()) comments->push_back({next_line_, trim(line.substr(1))});
    pos_ = std::min(end + 1, text_.size());
    ++next_line_;
  }
}

std::size_t CsvScanner::remaining_lines() const {
  return static_cast<std::size_t>(std::count(text_.begin() + pos_, text_.end(), '\n')) + 1;
}

std::string CsvScanner::column_name(std::size_t column) const {
  if (names_ != nullptr && column < names_->size()) return (*names_)[column];
  return "column " + std::to_string(column + 1);
}

// At an opening quote; leaves pos_ just after the closing quote.
std::string_view CsvScanner::quoted_field(std::size_t column) {
  const std::size_t open = pos_;
  std::size_t p = open + 1;
  bool doubled = false;
  for (;;) {
    std::size_t q = text_.find('"', p);
    if (q == std::string_view::npos)
      throw InputError(path_, record_line_, column_name(column),
                       "quote opened here is never closed");
    next_line_ += static_cast<std::size_t>(std::count(text_.begin() + p, text_.begin() + q, '\n'));
    if (q + 1 < text_.size() && text_[q + 1] == '"') {  // "" stands for one quote
      doubled = true;
      p = q + 2;
      continue;
    }
    pos_ = q + 1;
    std::string_view inner = text_.substr(open + 1, q - open - 1);
    if (!doubled) return inner;
    std::string& plain = unescaped_.emplace_back();
    plain.reserve(inner.size());
    for (std::size_t i = 0; i < inner.size(); ++i) {
      plain.push_back(inner[i]);
      if (inner[i] == '"') ++i;  // skip the second quote of the pair
    }
    return plain;
  }
}

bool CsvScanner::next(std::vector<std::string_view>& fields) {
  const std::size_t size = text_.size();
  while (pos_ < size) {
    record_line_ = next_line_;
    fields.clear();
    while (pos_ < size && (text_[pos_] == ' ' || text_[pos_] == '\t')) ++pos_;
    const std::size_t record_start = pos_;
    bool any_quoted = false;
    for (;;) {  // one field per pass
      while (pos_ < size && (text_[pos_] == ' ' || text_[pos_] == '\t')) ++pos_;
      if (pos_ < size && text_[pos_] == '"') {
        any_quoted = true;
        fields.push_back(quoted_field(fields.size()));
        while (pos_ < size && is_padding(text_[pos_])) ++pos_;
        if (pos_ < size && text_[pos_] != ',' && text_[pos_] != '\n')
          throw InputError(path_, record_line_, column_name(fields.size() - 1),
                           "unexpected text after the closing quote");
      } else {
        const std::size_t start = pos_;
        while (pos_ < size && text_[pos_] != ',' && text_[pos_] != '\n') ++pos_;
        fields.push_back(trim(text_.substr(start, pos_ - start)));
      }
      if (pos_ < size && text_[pos_] == ',') {
        ++pos_;
        continue;
      }
      if (pos_ < size) {  // '\n'
        ++pos_;
        ++next_line_;
      }
      break;
    }
    if (fields.size() == 1 && fields[0].empty() && !any_quoted) continue;  // blank line
    // A record whose first field is unquoted and starts with '#'. The first byte of the
    // record tells: a quoted first field starts with '"'.
    if (records_ > 0 && record_start < size && text_[record_start] == '#')
      throw InputError(path_, record_line_, "",
                       "a comment line among the data: lines starting with '#' are allowed only "
                       "before the header");
    ++records_;
    return true;
  }
  return false;
}

}  // namespace factorwatch::storage::detail
