// The whole content of a file in memory, read in one go, exactly once.
//
// Why whole-file: the CSV scanner then hands out string_views into one buffer, so the
// hot loop never allocates a std::string per field (5000 assets x 1500 dates is 7.5
// million fields). Regular files are read with one sized read; pipes (e.g. the shell's
// <(...), /dev/stdin) are read in chunks.
//
// Why exactly once: a pipe's bytes can be read only once. Anything else computed from the
// file (its content hash) must come from these bytes, never from opening the path again
// (two readers of one pipe split its stream between them).
//
// Two rules hold while reading, so that an endless or binary stream stops at once instead
// of filling memory:
//   - no NUL byte: every input file is UTF-8 text (CSV or JSON), which never holds one; a
//     NUL means a binary file, or text saved as UTF-16 ("Unicode text"), which is refused
//     naming the line and the byte's column, with a hint to save it as UTF-8;
//   - at most `max_bytes` bytes (kLargestInputFile unless the caller says otherwise).
#pragma once

#include <cstddef>
#include <string>
#include <string_view>

namespace factorwatch::storage::detail {

class FileText {
 public:
  // Throws InputError (no line) when the file cannot be opened or read, or is larger than
  // max_bytes; InputError naming the line for a NUL byte.
  explicit FileText(const std::string& path, std::size_t max_bytes);

  // The content after a UTF-8 byte-order mark, if any.
  std::string_view text() const;
  // Every byte read, a byte-order mark included: what `sha256sum FILE` hashes.
  std::string_view bytes() const { return bytes_; }

 private:
  std::string bytes_;
};

// Throws InputError naming `path`, the line and the column (1-based bytes) of the first NUL
// byte in `text`, if any. `text` starts at the beginning of the file.
void check_no_nul(std::string_view text, const std::string& path);

}  // namespace factorwatch::storage::detail
