// A seeded, deterministic generator of a fictional asset universe with a planted
// statistical factor model, for the demo and for planted-structure tests.
//
// Invented data, not market data. Daily returns follow the orthogonal factor model
//   x_t = mu + L f_t + e_t,  f_t ~ N(0, I_k),  e_t ~ N(0, Psi),  Sigma = L L' + Psi,
// with L switching from `loadings_before` to `loadings_after` at `change_index`:
// one factor moves from one cluster of assets to another.
//
// Pure: no files, no clock, no global state. Same options -> same numbers.
#pragma once

#include <Eigen/Dense>
#include <cstdint>
#include <string>
#include <vector>

#include "factorwatch/engine/date.h"

namespace factorwatch::demo {

using RowMatrix = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

struct DemoOptions {
  int assets = 640;  // N, number of fictional assets (ids ZQ-0001, ZQ-0002, ...), >= 20
  int years = 6;     // calendar years of Monday-to-Friday dates, 1..100
  int factors = 4;   // k planted factors: f1 market-like, f2..fk one asset cluster each;
                     // >= 2, >= moving_factor, and at most assets / 5
  std::uint64_t seed = 7;
  // First date is the first business day on or after this (yyyy-mm-dd).
  std::string start_date = "2020-01-01";
  // Index into the dates of the first date under the new loadings; -1 means 60% of
  // the way through (floor(0.6 T)). Must leave dates on both sides: 1..T-1.
  int change_day = -1;
  // The factor (1-based) whose loadings move at change_day, 2..factors. Its cluster
  // goes quiet and the receiving cluster (the last one, which no factor loads on
  // before the change) takes it over.
  int moving_factor = 3;
  // Share of listed asset-days missing at random (single scattered gaps), [0, 0.5).
  double gap_rate = 0.003;
  // Share of assets listing after the first date (NaN before), and of assets
  // delisting before the last date (NaN after); disjoint sets, sum <= 1.
  double listing_share = 0.10;
  double delisting_share = 0.06;

  // Scales, in daily return units (0.01 = 1% a day).
  double market_vol = 0.010;      // f1 loading scale; asset betas uniform in [0.6, 1.4)
  double cluster_vol_high = 0.009;  // f2 loading scale; f3..fk step down to cluster_vol_low
  double cluster_vol_low = 0.007;   // within a cluster, loadings are scale x U[0.7, 1.3)
  double cross_loading_sd = 0.0005; // small normal loadings of every asset on f2..fk
  double specific_vol_low = 0.008;  // specific volatility uniform in [low, high)
  double specific_vol_high = 0.025;
  double drift_low = 0.0001;        // mean daily return uniform in [low, high)
  double drift_high = 0.0004;

  // True when usable; otherwise *error names the field, its value and the rule.
  bool IsValid(std::string* error) const;
};

struct DemoUniverse {
  std::vector<engine::Date> dates;  // T ascending dates, Monday to Friday
  std::vector<std::string> assets;  // N ids "ZQ-0001", ...
  RowMatrix values;                 // T x N daily returns; quiet NaN = not listed or gap

  // The planted model, in return units.
  Eigen::MatrixXd loadings_before;    // N x k, dates [0, change_index)
  Eigen::MatrixXd loadings_after;     // N x k, dates [change_index, T)
  Eigen::VectorXd specific_variance;  // N, Psi diagonal (constant over time)
  Eigen::VectorXd mean;               // N, mu

  int change_index = 0;               // first date index under loadings_after
  int moving_factor = 0;              // 1-based factor that moved
  int from_cluster = 0;               // cluster it left (1-based)
  int to_cluster = 0;                 // cluster it joined (1-based)
  std::vector<int> cluster;           // N, 1-based cluster of each asset (1..k-1 carry
                                      // f2..fk before the change; k is the receiving one)
  // Listed on dates [listed_from[i], listed_until[i]) — half open, in date indices.
  std::vector<int> listed_from;       // 0 unless the asset lists late
  std::vector<int> listed_until;      // T unless the asset delists early
  DemoOptions options;                // as used, with change_day resolved

  // Sigma = L L' + Psi with the loadings before or after the change (dense N x N).
  Eigen::MatrixXd planted_covariance(bool after_change) const;
};

// Builds the universe. Throws std::invalid_argument with the IsValid message on misuse.
DemoUniverse generate_demo_universe(const DemoOptions& options);

// Plain-text account of what is planted (sizes, change date, which factor moved
// between which assets, listing counts), for README files and logs.
std::string describe_planted(const DemoUniverse& universe);

}  // namespace factorwatch::demo
