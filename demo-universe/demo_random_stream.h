// Seeded random numbers that come out the same on every standard library.
//
// std::mt19937_64 is specified bit for bit by the standard, but the standard's
// distributions (uniform_real, normal, uniform_int, shuffle) are not: two standard
// libraries may turn the same engine output into different numbers. So the
// transforms from raw 64-bit words to uniforms and normals are written here.
#pragma once

#include <cstdint>
#include <random>

namespace factorwatch::demo {

// One independent stream per purpose (loadings, listing, factor returns, ...), so
// changing one option, e.g. the gap rate, does not reshuffle the other draws.
enum class Stream : std::uint64_t {
  loadings = 1,
  specific = 2,
  drift = 3,
  listing = 4,
  factor_returns = 5,
  specific_returns = 6,
  gaps = 7,
  portfolios = 8,  // the demo portfolios (demo_portfolios.h)
};

class RandomStream {
 public:
  RandomStream(std::uint64_t seed, Stream purpose);

  // Uniform on [0, 1) with 53 random bits.
  double uniform();
  // Uniform on [low, high).
  double uniform(double low, double high) { return low + (high - low) * uniform(); }
  // Uniform integer on [0, n), n > 0, by scaling a 53-bit uniform (bias far below
  // anything a demo could notice for n up to millions).
  std::int64_t index(std::int64_t n);
  // Standard normal by Marsaglia's polar method: only sqrt (exactly rounded under
  // IEEE 754) and log, no sin/cos, keeping cross-platform drift to a minimum.
  double normal();

 private:
  std::mt19937_64 engine_;
  double spare_ = 0;
  bool has_spare_ = false;
};

}  // namespace factorwatch::demo
