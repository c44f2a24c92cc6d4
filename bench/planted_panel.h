// The benchmark panel: a deterministic planted factor model, so that the iterative
// fits converge the way they would on a realistic panel (a strong market factor,
// weaker cluster factors near the noise edge at small N, heterogeneous specific risk).
//
//   r_t,i = mu_i + sum_j L_ij vol_j f_t,j + s_i e_t,i,   f, e ~ N(0, 1) independent
//
//   vol_1 = 1.0% (market), vol_2..vol_10 = 0.60% .. 0.20% in equal steps
//   L_i1 = 1 + 0.3 z           (market beta)
//   L_ij = 0.4 z + [j == cluster(i)] for j = 2..10, cluster(i) = 2 + i mod 9
//   s_i uniform in [1%, 3%),  mu_i = 0.03% + 0.02% z
//
// Asset i draws from its own stream (seeded from the panel seed and i), so the panel
// for N assets is the first N columns of the panel for any larger N, and rows
// [first, first + rows) can be generated without holding the whole (T + 1) x N panel.
#pragma once

#include <Eigen/Dense>

#include <cmath>
#include <cstdint>
#include <cstdio>
#include <random>
#include <stdexcept>
#include <string>
#include <vector>

#include "factorwatch/engine/date.h"

namespace factorwatch::bench {

using Index = Eigen::Index;
using RowMatrix = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

constexpr int kPlantedFactors = 10;
constexpr std::uint64_t kPanelSeed = 0x6661637477617463ULL;

// Standard normals from a 64-bit Mersenne Twister by the polar Box-Muller method:
// two uniforms on (-1, 1) accepted inside the unit disc give two independent normals.
class NormalStream {
 public:
  explicit NormalStream(std::uint64_t seed) : rng_(seed) {}

  double next() {
    if (have_spare_) {
      have_spare_ = false;
      return spare_;
    }
    double u = 0, v = 0, s = 0;
    do {
      u = 2.0 * uniform() - 1.0;
      v = 2.0 * uniform() - 1.0;
      s = u * u + v * v;
    } while (s >= 1.0 || s == 0.0);
    const double m = std::sqrt(-2.0 * std::log(s) / s);
    spare_ = v * m;
    have_spare_ = true;
    return u * m;
  }

  double uniform() { return double(rng_() >> 11) * 0x1.0p-53; }  // [0, 1), 53 bits

 private:
  std::mt19937_64 rng_;
  double spare_ = 0;
  bool have_spare_ = false;
};

// A well-mixed seed per stream (one finalising round of a 64-bit hash).
inline std::uint64_t stream_seed(std::uint64_t base, std::uint64_t stream) {
  std::uint64_t z = base + 0x9e3779b97f4a7c15ULL * (stream + 1);
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}

inline double factor_vol(int j) {
  return j == 0 ? 0.010 : 0.006 - (j - 1) * (0.004 / (kPlantedFactors - 2));
}

// Rows [first, first + rows) of the planted panel with `assets` columns; the full
// panel has `total_rows` rows (factor scores are drawn for all of them).
inline RowMatrix planted_rows(Index total_rows, Index assets, Index first, Index rows) {
  if (first < 0 || rows < 0 || first + rows > total_rows)
    throw std::invalid_argument("planted_rows: rows out of range");
  NormalStream factor_stream(stream_seed(kPanelSeed, 0));
  Eigen::MatrixXd F(total_rows, kPlantedFactors);  // scaled factor returns
  for (Index t = 0; t < total_rows; ++t)
    for (int j = 0; j < kPlantedFactors; ++j) F(t, j) = factor_vol(j) * factor_stream.next();

  RowMatrix out(rows, assets);
  Eigen::VectorXd loading(kPlantedFactors);
  for (Index i = 0; i < assets; ++i) {
    NormalStream z(stream_seed(kPanelSeed, std::uint64_t(i) + 1));
    loading[0] = 1.0 + 0.3 * z.next();
    const int cluster = 1 + int(i % (kPlantedFactors - 1));
    for (int j = 1; j < kPlantedFactors; ++j) loading[j] = 0.4 * z.next() + (j == cluster ? 1.0 : 0.0);
    const double specific_vol = 0.01 + 0.02 * z.uniform();
    const double mean = 0.0003 + 0.0002 * z.next();
    for (Index t = 0; t < first + rows; ++t) {
      const double e = z.next();  // drawn for every row so that rows do not depend on `first`
      if (t < first) continue;
      out(t - first, i) = mean + F.row(t).dot(loading) + specific_vol * e;
    }
  }
  return out;
}

// Monday-to-Friday dates from 2000-01-03 (a Monday), skipping the first `first`. The
// dates are labels only; starting in 2000 keeps the longest panels we bench (2,500 dates
// and more) before today, since a returns file may not hold a future date.
inline std::vector<engine::Date> business_dates(Index first, Index count) {
  std::vector<engine::Date> out;
  engine::Date d = *engine::Date::from_iso("2000-01-03");
  Index index = 0;
  for (int weekday = 0; Index(out.size()) < count; weekday = (weekday + 1) % 7) {  // 0 = Monday
    if (weekday < 5 && index++ >= first) out.push_back(d);
    d = engine::Date::from_days(d.days() + 1);
  }
  return out;
}

inline std::vector<std::string> asset_names(Index assets) {
  std::vector<std::string> out;
  out.reserve(std::size_t(assets));
  for (Index i = 0; i < assets; ++i) {
    char buf[24];
    std::snprintf(buf, sizeof buf, "BX%05lld", static_cast<long long>(i + 1));
    out.emplace_back(buf);
  }
  return out;
}

// Raw panel file: int64 rows, int64 cols, then rows x cols float64, row-major,
// little-endian (the only byte order this code runs on; checked at write time).
inline void write_panel_file(const std::string& path, const RowMatrix& values) {
  const std::uint16_t probe = 1;
  if (*reinterpret_cast<const unsigned char*>(&probe) != 1)
    throw std::runtime_error("write_panel_file: big-endian host not supported");
  std::FILE* f = std::fopen(path.c_str(), "wb");
  if (!f) throw std::runtime_error("cannot open " + path + " for writing");
  const std::int64_t header[2] = {std::int64_t(values.rows()), std::int64_t(values.cols())};
  bool ok = std::fwrite(header, sizeof header, 1, f) == 1;
  const std::size_t count = std::size_t(values.size());
  ok = ok && std::fwrite(values.data(), sizeof(double), count, f) == count;
  ok = (std::fclose(f) == 0) && ok;
  if (!ok) throw std::runtime_error("short write to " + path);
}

}  // namespace factorwatch::bench
