// describe_planted: the plain-text account of what the generator planted.
#include <cmath>
#include <cstdarg>
#include <cstdio>
#include <string>

#include "demo_planted.h"
#include "generator.h"

namespace factorwatch::demo {
namespace {

std::string format(const char* pattern, ...) __attribute__((format(printf, 1, 2)));
std::string format(const char* pattern, ...) {
  char buffer[512];
  va_list args;
  va_start(args, pattern);
  std::vsnprintf(buffer, sizeof buffer, pattern, args);
  va_end(args);
  return buffer;
}

// "ZQ-0161 .. ZQ-0320, 160 assets" for a contiguous cluster.
std::string cluster_span(const DemoUniverse& u, int c) {
  int first = -1, last = -1;
  for (int i = 0; i < static_cast<int>(u.cluster.size()); ++i) {
    if (u.cluster[i] != c) continue;
    if (first < 0) first = i;
    last = i;
  }
  if (first < 0) return "(empty)";
  return u.assets[first] + " .. " + u.assets[last] + format(", %d assets", last - first + 1);
}

}  // namespace

std::string describe_planted(const DemoUniverse& u) {
  const DemoOptions& o = u.options;
  const int periods = static_cast<int>(u.dates.size());
  const int n = static_cast<int>(u.assets.size());
  const int k = static_cast<int>(u.loadings_before.cols());
  std::string s;
  s += "Fictional demo universe: invented numbers, not market data.\n";
  s += format("Seed %llu; %d business days %s .. %s (Monday to Friday, no holidays); %d assets %s .. %s.\n",
              static_cast<unsigned long long>(o.seed), periods, u.dates.front().iso().c_str(),
              u.dates.back().iso().c_str(), n, u.assets.front().c_str(), u.assets.back().c_str());
  s += "\nPlanted model (daily returns, return units: 0.01 = 1% a day):\n";
  s += format("  x_t = mu + L f_t + e_t,  f_t ~ N(0, I_%d),  e_t ~ N(0, Psi),  Sigma = L L' + Psi\n", k);
  s += format("  f1 market-like: every asset loads %.4g x beta, beta uniform in [0.6, 1.4)\n", o.market_vol);
  for (int j = 1; j < k; ++j) {
    const double scale = cluster_scale(o, j);
    s += format("  f%d: cluster %d (%s), loadings %.4g x U[0.7, 1.3)%s\n", j + 1, j, cluster_span(u, j).c_str(),
                scale, j + 1 == u.moving_factor ? "  <- moves at the change" : "");
  }
  s += format("  cluster %d (%s): no cluster factor before the change\n", u.to_cluster,
              cluster_span(u, u.to_cluster).c_str());
  s += format("  every asset also loads N(0, %.4g^2) on f2..f%d outside its own cluster\n", o.cross_loading_sd, k);
  s += format("  specific volatility uniform in [%.4g, %.4g); drift mu uniform in [%.4g, %.4g)\n",
              o.specific_vol_low, o.specific_vol_high, o.drift_low, o.drift_high);
  s += "\nStructural change:\n";
  s += format("  from date index %d (%s) on, f%d leaves cluster %d (%s)\n", u.change_index,
              u.dates[u.change_index].iso().c_str(), u.moving_factor, u.from_cluster,
              cluster_span(u, u.from_cluster).c_str());
  s += format("  and loads on cluster %d (%s) instead; all other loadings are unchanged.\n", u.to_cluster,
              cluster_span(u, u.to_cluster).c_str());
  s += format("  Last date under the old loadings: %s.\n", u.dates[u.change_index - 1].iso().c_str());

  int late = 0, early = 0;
  long long listed_cells = 0, gaps = 0;
  for (int i = 0; i < n; ++i) {
    late += u.listed_from[i] > 0;
    early += u.listed_until[i] < periods;
    for (int t = u.listed_from[i]; t < u.listed_until[i]; ++t) {
      ++listed_cells;
      gaps += std::isnan(u.values(t, i));
    }
  }
  s += "\nMissing values (empty, never zero):\n";
  s += format("  %d assets list after the first date (missing before), %d delist before the last (missing after)\n",
              late, early);
  s += format("  %lld scattered gaps = %.4f%% of listed asset-days (asked for %.4g%%)\n", gaps,
              listed_cells ? 100.0 * static_cast<double>(gaps) / static_cast<double>(listed_cells) : 0.0,
              100.0 * o.gap_rate);
  return s;
}

}  // namespace factorwatch::demo
