#include "estimate.h"

namespace factorwatch::engine::detail {

void apply_specific_floor(const Eigen::VectorXd& s, double floor_fraction, Eigen::VectorXd& psi,
                          std::vector<bool>& heywood) {
  heywood.assign(std::size_t(psi.size()), false);
  for (Eigen::Index i = 0; i < psi.size(); ++i) {
    const double floor = floor_fraction * s[i];
    if (!(psi[i] > floor * (1.0 + 1e-9))) {
      psi[i] = floor;
      heywood[std::size_t(i)] = true;
    }
  }
}

}  // namespace factorwatch::engine::detail
