// Observation weights over the dates of a window.
#pragma once

#include <Eigen/Dense>

#include "factorwatch/engine/fit.h"

namespace factorwatch::engine::detail {

// Weights for `periods` dates, oldest first, normalised to sum to one.
// Equal: 1/T each. EWMA: w_t proportional to 0.5^((T-1-t)/half_life), so the
// newest date has weight 1 and a date half_life periods older has weight 1/2.
Eigen::VectorXd observation_weights(Eigen::Index periods, Weighting weighting, double half_life);

// Kish's effective sample size (sum w)^2 / sum w^2; equals T for equal weights.
double effective_sample_size(const Eigen::VectorXd& weights);

}  // namespace factorwatch::engine::detail
