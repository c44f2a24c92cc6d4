// The whole content of a file in memory, read in one go.
//
// Why whole-file: the CSV scanner then hands out string_views into one buffer, so the
// hot loop never allocates a std::string per field (5000 assets x 1500 dates is 7.5
// million fields). Regular files are read with one sized read; pipes (e.g. the shell's
// <(...)) are read in chunks.
#pragma once

#include <string>
#include <string_view>

namespace factorwatch::storage::detail {

class FileText {
 public:
  // Throws InputError (no line) when the file cannot be opened or read.
  explicit FileText(const std::string& path);

  // The content after a UTF-8 byte-order mark, if any.
  std::string_view text() const;

 private:
  std::string bytes_;
};

}  // namespace factorwatch::storage::detail
