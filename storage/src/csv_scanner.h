// Splits CSV text into records and fields without copying (RFC 4180 basics).
//
// Fields are string_views into the text; only a quoted field holding doubled quotes ("")
// needs a copy, kept by the scanner for its lifetime (rare, so the hot loop stays free of
// allocations). Spaces, tabs and carriage returns around unquoted fields are dropped, so
// CRLF files read like LF files. Blank lines are skipped. Lines are counted physically,
// including newlines inside quoted fields, so error messages point at the editor's line.
#pragma once

#include <cstddef>
#include <deque>
#include <string>
#include <string_view>
#include <vector>

namespace factorwatch::storage::detail {

class CsvScanner {
 public:
  // `path` is only used in error messages; it must outlive the scanner.
  CsvScanner(std::string_view text, const std::string& path);

  // A comment line: its number (1-based) and its text after the '#', trimmed.
  struct Comment {
    std::size_t line;
    std::string_view text;
  };
  // Skips comment lines (first non-blank character '#') and blank lines at the current
  // position, appending the comments to `comments` when given. Called once before the
  // header: comments are not allowed among the data.
  void skip_comments(std::vector<Comment>* comments = nullptr);

  // Reads the next non-blank record into `fields` (cleared first); false at the end.
  // Throws InputError for an unterminated quote, text after a closing quote, and for a
  // comment line after the first record (the header): there it is most likely a note
  // pasted among the data, and reading it as a row would give a puzzling message.
  bool next(std::vector<std::string_view>& fields);

  // First line (1-based) of the record last returned by next().
  std::size_t line() const { return record_line_; }

  // Column names for error messages; without them columns are named by position.
  void set_column_names(const std::vector<std::string>* names) { names_ = names; }

  // Number of line ends from the current position on: a cheap upper bound on the
  // records still to come, used to reserve storage.
  std::size_t remaining_lines() const;

 private:
  std::string_view quoted_field(std::size_t column);
  std::string column_name(std::size_t column) const;

  std::string_view text_;
  const std::string& path_;
  std::size_t pos_ = 0;
  std::size_t next_line_ = 1;
  std::size_t record_line_ = 0;
  std::size_t records_ = 0;  // returned by next() so far
  const std::vector<std::string>* names_ = nullptr;
  std::deque<std::string> unescaped_;  // deque: growing it never moves earlier strings
};

}  // namespace factorwatch::storage::detail
