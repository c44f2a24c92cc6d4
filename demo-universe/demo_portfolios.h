// Two fictional portfolios on the demo universe, for the demo and the examples: a
// benchmark holding every asset listed on the last date, weighted by an invented "size",
// and a long-short book tilted towards two clusters, with one holding that delisted
// (which a risk report must list as not modelled). Invented weights, like every number
// of the demo universe; drawn from the universe's seed, so the same options give the
// same portfolios.
#pragma once

#include <string>
#include <utility>
#include <vector>

#include "generator.h"

namespace factorwatch::demo {

struct DemoPortfolio {
  std::string name;
  std::string as_of;      // the universe's last date
  std::string benchmark;  // "" for the benchmark itself
  std::vector<std::pair<std::string, double>> weights;  // asset, weight; in asset order
};

// The benchmark: weights proportional to exp(N(0, 1)) sizes over the listed assets, summing to 1.
DemoPortfolio demo_benchmark(const DemoUniverse& universe);

// The book: 60 long positions (weights summing to 1.15) drawn two in three from the clusters
// of the moving factor (the cluster it leaves and the one it joins), 12 short positions
// (summing to -0.15) from the others, and 1% in the first asset that delisted, if any.
DemoPortfolio demo_book(const DemoUniverse& universe);

}  // namespace factorwatch::demo
