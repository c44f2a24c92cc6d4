// The planted parameters of the demo universe: clusters, loadings before and after
// the change, specific variances, drift, and the listing calendar.
#pragma once

#include <Eigen/Dense>
#include <vector>

#include "generator.h"

namespace factorwatch::demo {

struct PlantedModel {
  std::vector<int> cluster;  // N, 1-based
  Eigen::MatrixXd loadings_before;
  Eigen::MatrixXd loadings_after;
  Eigen::VectorXd specific_variance;
  Eigen::VectorXd mean;
  int from_cluster = 0;
  int to_cluster = 0;
};

// Loading scale of factor column j (0-based, 1..k-1): f2 gets cluster_vol_high,
// stepping evenly down to cluster_vol_low for fk.
double cluster_scale(const DemoOptions& options, int j);

// Cluster c (1..k) is a contiguous block of about N/k assets. Clusters 1..k-1
// carry f2..fk; cluster k carries none until the moving factor arrives.
PlantedModel plant_model(const DemoOptions& options);

struct ListingCalendar {
  std::vector<int> listed_from;   // N
  std::vector<int> listed_until;  // N
};

// Picks which assets list late and which delist early (disjoint, chosen at random
// across all clusters) and on which date index, given T dates.
ListingCalendar plant_listing(const DemoOptions& options, int periods);

}  // namespace factorwatch::demo
