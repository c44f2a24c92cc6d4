#include "factorwatch/storage/content_hash.h"

#include "sha256.h"

namespace factorwatch::storage {

std::string file_sha256(const std::string& path) { return detail::sha256_file_hex(path); }

std::string text_sha256(std::string_view bytes) { return detail::sha256_hex(bytes); }

}  // namespace factorwatch::storage
