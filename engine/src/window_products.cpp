#include "factorwatch/engine/window_products.h"

#include <algorithm>
#include <cmath>
#include <cstring>

#include "moments.h"

namespace factorwatch::engine {
namespace {

// A 64-bit digest of one date's values (their bit patterns, so -0.0 and 0.0 differ and a
// changed last digit is seen): four independent multiply-add lanes over the row, so that
// the pass runs at the speed of reading the row rather than at one multiply's latency per
// value, then splitmix64's finaliser over the lanes.
std::uint64_t mix(std::uint64_t h) {
  h = (h ^ (h >> 30)) * 0xbf58476d1ce4e5b9ULL;
  h = (h ^ (h >> 27)) * 0x94d049bb133111ebULL;
  return h ^ (h >> 31);
}

std::uint64_t row_digest(const double* row, Eigen::Index n, bool& finite) {
  constexpr std::uint64_t kOdd[4] = {0x9e3779b97f4a7c15ULL, 0xc2b2ae3d27d4eb4fULL, 0x165667b19e3779f9ULL,
                                     0xd6e8feb86659fd93ULL};
  std::uint64_t lane[4] = {1, 2, 3, 4};
  bool ok = true;
  Eigen::Index j = 0;
  for (; j + 4 <= n; j += 4) {
    for (int l = 0; l < 4; ++l) {
      std::uint64_t bits;
      std::memcpy(&bits, row + j + l, sizeof bits);
      ok &= std::isfinite(row[j + l]);
      lane[l] = (lane[l] ^ bits) * kOdd[l] + (bits >> 29);
    }
  }
  for (; j < n; ++j) {
    std::uint64_t bits;
    std::memcpy(&bits, row + j, sizeof bits);
    ok &= std::isfinite(row[j]);
    lane[0] = (lane[0] ^ bits) * kOdd[0] + (bits >> 29);
  }
  finite = finite && ok;
  std::uint64_t h = mix(std::uint64_t(n));
  for (std::uint64_t v : lane) h = mix(h ^ mix(v));
  return h;
}

}  // namespace

const WindowProducts::Update& WindowProducts::update(const ReturnsPanel& panel) {
  const Eigen::Index T = panel.periods(), N = panel.width();
  std::vector<std::uint64_t> digests(static_cast<std::size_t>(T));
  bool finite = true;
  for (Eigen::Index t = 0; t < T; ++t)
    digests[std::size_t(t)] = row_digest(panel.values.data() + t * N, N, finite);

  last_ = Update{};
  // The overlap: the new window's first dates are the held window's last ones.
  Eigen::Index shift = -1;
  if (finite && !dates_.empty() && assets_ == panel.assets && T > 0) {
    const auto it = std::find(dates_.begin(), dates_.end(), panel.dates.front());
    if (it != dates_.end()) shift = Eigen::Index(it - dates_.begin());
  }
  Eigen::Index overlap = 0;
  if (shift >= 0) {
    overlap = std::min<Eigen::Index>(Eigen::Index(dates_.size()) - shift, T);
    for (Eigen::Index t = 0; t < overlap; ++t) {
      const std::size_t old_t = std::size_t(shift + t);
      if (dates_[old_t] != panel.dates[std::size_t(t)] || row_digests_[old_t] != digests[std::size_t(t)]) {
        overlap = 0;
        break;
      }
    }
  }
  dates_ = panel.dates;
  assets_ = panel.assets;
  row_digests_ = std::move(digests);
  if (!finite) {
    R_.resize(0, 0);
    return last_;
  }
  // Past a quarter of the window, one blocked product beats row-by-row products.
  if (overlap > 0 && T - overlap <= T / 4) {
    Eigen::MatrixXd next(T, T);
    next.topLeftCorner(overlap, overlap) = R_.block(shift, shift, overlap, overlap);
    for (Eigen::Index r = overlap; r < T; ++r) {
      const Eigen::VectorXd products = panel.values * panel.values.row(r).transpose();
      next.row(r) = products.transpose();
      next.col(r) = products;
    }
    R_.swap(next);
    last_.reused_rows = overlap;
    last_.computed_rows = T - overlap;
  } else {
    R_ = detail::gram_matrix(panel.values);
    last_.computed_rows = T;
  }
  last_.usable = true;
  return last_;
}

}  // namespace factorwatch::engine
