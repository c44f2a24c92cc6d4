// What every estimator hands back, on the basis scale, before canonical form.
#pragma once

#include <limits>
#include <string>
#include <vector>

#include "factorwatch/engine/fit.h"

namespace factorwatch::engine::detail {

struct Estimate {
  Eigen::MatrixXd loadings;           // N x k, basis scale
  Eigen::VectorXd specific_variance;  // N, basis scale
  std::vector<bool> heywood;          // N
  int iterations = 0;   // em_passes + newton_steps for ML
  int em_passes = 0;
  int newton_steps = 0;
  int profile_steps = 0;  // evaluations of the fixed point in psi (wide panels)
  // ML's stopping criterion at the returned point (max_likelihood.cpp); NaN elsewhere.
  double largest_scaled_gradient = std::numeric_limits<double>::quiet_NaN();
  Termination termination = Termination::not_run;
  std::string message;
  std::string solver_path;
  bool warm_started = false;
};

// Floors psi_i at floor_fraction * s_ii and flags the assets that hit it.
void apply_specific_floor(const Eigen::VectorXd& s, double floor_fraction, Eigen::VectorXd& psi,
                          std::vector<bool>& heywood);

}  // namespace factorwatch::engine::detail
