#include "weights.h"

#include <cmath>

namespace factorwatch::engine::detail {

Eigen::VectorXd observation_weights(Eigen::Index periods, Weighting weighting, double half_life) {
  Eigen::VectorXd w(periods);
  if (weighting == Weighting::equal || periods == 0) {
    w.setConstant(1.0);
  } else {
    const double decay = std::log(0.5) / half_life;
    for (Eigen::Index t = 0; t < periods; ++t) w[t] = std::exp(decay * double(periods - 1 - t));
  }
  if (periods > 0) w /= w.sum();
  return w;
}

double effective_sample_size(const Eigen::VectorXd& weights) {
  const double s = weights.sum();
  const double s2 = weights.squaredNorm();
  return s2 > 0 ? s * s / s2 : 0.0;
}

}  // namespace factorwatch::engine::detail
