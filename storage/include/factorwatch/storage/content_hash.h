// The content hash recorded with every ingest run: SHA-256 of the file's bytes, in hex,
// the same text `sha256sum FILE` prints.
#pragma once

#include <string>
#include <string_view>

namespace factorwatch::storage {

// Throws std::runtime_error when the file cannot be read.
std::string file_sha256(const std::string& path);

// The same for bytes in memory (an uploaded file): equal to file_sha256 of a file holding them.
std::string text_sha256(std::string_view bytes);

}  // namespace factorwatch::storage
