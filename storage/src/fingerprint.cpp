#include "fingerprint.h"

#include <cstring>

namespace factorwatch::storage::detail {
namespace {

inline std::uint64_t mix(std::uint64_t z) {
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
  return z ^ (z >> 31);
}

}  // namespace

void Fingerprint::add(const void* data, std::size_t bytes) {
  const unsigned char* p = static_cast<const unsigned char*>(data);
  std::uint64_t word;
  for (; bytes >= 8; p += 8, bytes -= 8) {
    std::memcpy(&word, p, 8);
    ++count_;
    std::uint64_t& lane = lanes_[count_ & 3];
    lane = mix(lane ^ (word + 0x9e3779b97f4a7c15ull * count_));
  }
  if (bytes > 0) {
    word = 0;
    std::memcpy(&word, p, bytes);
    ++count_;
    std::uint64_t& lane = lanes_[count_ & 3];
    lane = mix(lane ^ (word + 0x9e3779b97f4a7c15ull * count_) ^ (std::uint64_t{bytes} << 56));
  }
}

void Fingerprint::add(const std::string& text) {
  add(static_cast<std::int64_t>(text.size()));  // so that "ab","c" differs from "a","bc"
  add(text.data(), text.size());
}

void Fingerprint::add(std::int64_t value) { add(&value, sizeof value); }

std::uint64_t Fingerprint::value() const {
  std::uint64_t h = count_;
  for (std::uint64_t lane : lanes_) h = mix(h ^ lane);
  return h;
}

std::string Fingerprint::hex() const {
  static const char digits[] = "0123456789abcdef";
  const std::uint64_t h = value();
  std::string out(16, '0');
  for (int i = 0; i < 16; ++i) out[15 - i] = digits[(h >> (4 * i)) & 15];
  return out;
}

}  // namespace factorwatch::storage::detail
