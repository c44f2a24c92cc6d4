#include "factorwatch/storage/content_hash.h"

#include "sha256.h"

namespace factorwatch::storage {

std::string file_sha256(const std::string& path) { return detail::sha256_file_hex(path); }

}  // namespace factorwatch::storage
