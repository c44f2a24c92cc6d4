#include "demo_portfolios.h"

#include <algorithm>
#include <cmath>
#include <numeric>

#include "demo_random_stream.h"

namespace factorwatch::demo {
namespace {

bool listed_at_end(const DemoUniverse& u, std::size_t i) {
  return u.listed_until[i] == static_cast<int>(u.dates.size());
}

// Scales `weights[from, to)` so that they add up to `total`.
void scale_to(std::vector<std::pair<std::string, double>>& weights, std::size_t from, std::size_t to, double total) {
  double sum = 0;
  for (std::size_t i = from; i < to; ++i) sum += weights[i].second;
  for (std::size_t i = from; i < to; ++i) weights[i].second *= total / sum;
}

}  // namespace

DemoPortfolio demo_benchmark(const DemoUniverse& u) {
  RandomStream rng(u.options.seed, Stream::portfolios);
  DemoPortfolio p{"demo-benchmark", u.dates.back().iso(), "", {}};
  for (std::size_t i = 0; i < u.assets.size(); ++i) {
    const double size = std::exp(rng.normal());  // drawn for every asset, so the book's draws do not depend on listing
    if (listed_at_end(u, i)) p.weights.emplace_back(u.assets[i], size);
  }
  scale_to(p.weights, 0, p.weights.size(), 1.0);
  return p;
}

DemoPortfolio demo_book(const DemoUniverse& u) {
  RandomStream rng(u.options.seed + 1, Stream::portfolios);
  std::vector<std::size_t> tilted, others;
  for (std::size_t i = 0; i < u.assets.size(); ++i) {
    if (!listed_at_end(u, i)) continue;
    const int c = u.cluster[i];
    (c == u.from_cluster || c == u.to_cluster ? tilted : others).push_back(i);
  }
  // Draws without replacement: pick an index, swap it out of the pool.
  auto draw = [&rng](std::vector<std::size_t>& pool) {
    const auto k = static_cast<std::size_t>(rng.index(static_cast<std::int64_t>(pool.size())));
    const std::size_t chosen = pool[k];
    pool[k] = pool.back();
    pool.pop_back();
    return chosen;
  };
  std::vector<std::size_t> longs, shorts;
  for (int n = 0; n < 60 && !(tilted.empty() && others.empty()); ++n) {
    const bool from_tilt = !tilted.empty() && (others.empty() || rng.uniform() < 2.0 / 3.0);
    longs.push_back(draw(from_tilt ? tilted : others));
  }
  for (int n = 0; n < 12 && !others.empty(); ++n) shorts.push_back(draw(others));
  std::sort(longs.begin(), longs.end());
  std::sort(shorts.begin(), shorts.end());

  DemoPortfolio p{"demo-book", u.dates.back().iso(), "demo-benchmark", {}};
  for (std::size_t i : longs) p.weights.emplace_back(u.assets[i], rng.uniform(0.5, 1.5));
  scale_to(p.weights, 0, p.weights.size(), 1.15);
  const std::size_t first_short = p.weights.size();
  for (std::size_t i : shorts) p.weights.emplace_back(u.assets[i], -rng.uniform(0.5, 1.5));
  scale_to(p.weights, first_short, p.weights.size(), -0.15);
  for (std::size_t i = 0; i < u.assets.size(); ++i)
    if (u.listed_until[i] < static_cast<int>(u.dates.size())) {
      p.weights.emplace_back(u.assets[i], 0.01);  // a delisted name still on the book
      break;
    }
  return p;
}

}  // namespace factorwatch::demo
