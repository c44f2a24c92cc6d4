#include "demo_random_stream.h"

#include <cmath>

namespace factorwatch::demo {
namespace {

// SplitMix64 finaliser: spreads (seed, purpose) over the whole 64-bit seed space so
// that neighbouring seeds and purposes give unrelated Mersenne Twister states.
std::uint64_t mix(std::uint64_t x) {
  x += 0x9e3779b97f4a7c15ULL;
  x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9ULL;
  x = (x ^ (x >> 27)) * 0x94d049bb133111ebULL;
  return x ^ (x >> 31);
}

}  // namespace

RandomStream::RandomStream(std::uint64_t seed, Stream purpose)
    : engine_(mix(mix(seed) ^ static_cast<std::uint64_t>(purpose))) {}

double RandomStream::uniform() {
  return static_cast<double>(engine_() >> 11) * 0x1.0p-53;
}

std::int64_t RandomStream::index(std::int64_t n) {
  return static_cast<std::int64_t>(uniform() * static_cast<double>(n));
}

double RandomStream::normal() {
  if (has_spare_) {
    has_spare_ = false;
    return spare_;
  }
  double u = 0, v = 0, s = 0;
  do {
    u = 2.0 * uniform() - 1.0;
    v = 2.0 * uniform() - 1.0;
    s = u * u + v * v;
  } while (s >= 1.0 || s == 0.0);
  const double factor = std::sqrt(-2.0 * std::log(s) / s);
  spare_ = v * factor;
  has_spare_ = true;
  return u * factor;
}

}  // namespace factorwatch::demo
