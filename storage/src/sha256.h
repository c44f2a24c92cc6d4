// SHA-256 (FIPS 180-4) of a file's bytes: the content hash of an ingest run, so that an
// operator can compare it with `sha256sum FILE`.
#pragma once

#include <array>
#include <cstdint>
#include <string>
#include <string_view>

namespace factorwatch::storage::detail {

class Sha256 {
 public:
  Sha256();
  void update(const void* data, std::size_t bytes);
  std::array<std::uint8_t, 32> finish();

 private:
  void block(const std::uint8_t* p);
  std::uint32_t h_[8];
  std::uint8_t buffer_[64];
  std::size_t buffered_ = 0;
  std::uint64_t total_ = 0;
};

std::string sha256_hex(std::string_view bytes);
// Throws std::runtime_error when the file cannot be read.
std::string sha256_file_hex(const std::string& path);

}  // namespace factorwatch::storage::detail
