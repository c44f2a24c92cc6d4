// The content hash recorded with every ingest run: SHA-256 of the file's bytes, in hex,
// the same text `sha256sum FILE` prints.
#pragma once

#include <string>

namespace factorwatch::storage {

// Throws std::runtime_error when the file cannot be read.
std::string file_sha256(const std::string& path);

}  // namespace factorwatch::storage
