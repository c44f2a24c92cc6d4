#include "demo_planted.h"

#include <algorithm>
#include <cmath>
#include <numeric>

#include "demo_random_stream.h"

namespace factorwatch::demo {
double cluster_scale(const DemoOptions& o, int j) {
  const int k = o.factors;
  if (k <= 2) return o.cluster_vol_high;
  return o.cluster_vol_high + (o.cluster_vol_low - o.cluster_vol_high) * (j - 1) / (k - 2);
}

PlantedModel plant_model(const DemoOptions& o) {
  const int n = o.assets;
  const int k = o.factors;
  const int moving = o.moving_factor - 1;  // 0-based column
  PlantedModel m;
  m.cluster.resize(n);
  for (int i = 0; i < n; ++i) {
    m.cluster[i] = 1 + static_cast<int>(static_cast<long long>(i) * k / n);
  }
  m.from_cluster = o.moving_factor - 1;  // cluster c carries factor c + 1
  m.to_cluster = k;

  // Every draw is made for every asset, used or not, so an asset's numbers do not
  // depend on which cluster its neighbours fell into.
  RandomStream rng(o.seed, Stream::loadings);
  m.loadings_before.resize(n, k);
  for (int i = 0; i < n; ++i) {
    m.loadings_before(i, 0) = o.market_vol * rng.uniform(0.6, 1.4);
    for (int j = 1; j < k; ++j) {
      const double cross = o.cross_loading_sd * rng.normal();
      const double block = cluster_scale(o, j) * rng.uniform(0.7, 1.3);
      m.loadings_before(i, j) = m.cluster[i] == j ? block : cross;
    }
  }
  // After the change only the moving column differs: its old cluster drops to
  // cross-loading size, the receiving cluster takes block-size loadings.
  m.loadings_after = m.loadings_before;
  for (int i = 0; i < n; ++i) {
    const double cross = o.cross_loading_sd * rng.normal();
    const double block = cluster_scale(o, moving) * rng.uniform(0.7, 1.3);
    if (m.cluster[i] == m.from_cluster) m.loadings_after(i, moving) = cross;
    if (m.cluster[i] == m.to_cluster) m.loadings_after(i, moving) = block;
  }

  RandomStream specific(o.seed, Stream::specific);
  m.specific_variance.resize(n);
  for (int i = 0; i < n; ++i) {
    const double vol = specific.uniform(o.specific_vol_low, o.specific_vol_high);
    m.specific_variance(i) = vol * vol;
  }
  RandomStream drift(o.seed, Stream::drift);
  m.mean.resize(n);
  for (int i = 0; i < n; ++i) m.mean(i) = drift.uniform(o.drift_low, o.drift_high);
  return m;
}

ListingCalendar plant_listing(const DemoOptions& o, int periods) {
  const int n = o.assets;
  ListingCalendar c;
  c.listed_from.assign(n, 0);
  c.listed_until.assign(n, periods);

  // Fisher-Yates by hand: std::shuffle's result differs between standard libraries.
  RandomStream rng(o.seed, Stream::listing);
  std::vector<int> order(n);
  std::iota(order.begin(), order.end(), 0);
  for (int i = n - 1; i > 0; --i) std::swap(order[i], order[rng.index(i + 1)]);

  const int late = static_cast<int>(std::lround(o.listing_share * n));
  const int early = std::min(n - late, static_cast<int>(std::lround(o.delisting_share * n)));
  // Listing dates in the first three quarters and delisting dates in the last three
  // leave every asset at least a quarter of the history, enough to fit on.
  const auto pick = [&](double from_share, double to_share) {
    const int lo = std::max(1, static_cast<int>(std::ceil(from_share * periods)));
    const int hi = std::max(lo, static_cast<int>(std::floor(to_share * periods)));
    return lo + static_cast<int>(rng.index(hi - lo + 1));
  };
  for (int r = 0; r < late; ++r) c.listed_from[order[r]] = pick(0.05, 0.75);
  for (int r = late; r < late + early; ++r) c.listed_until[order[r]] = pick(0.25, 0.95);
  return c;
}

}  // namespace factorwatch::demo
