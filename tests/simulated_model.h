// Planted-structure data: returns drawn from a known orthogonal factor model
// x_t = mu + L f_t + e_t, f_t ~ N(0, I), e_t ~ N(0, Psi). Invented data, for tests
// of facts the theory states; never presented as market data.
#pragma once

#include <random>
#include <string>

#include "factorwatch/engine/panel.h"

namespace factorwatch::testing {

struct PlantedModel {
  Eigen::MatrixXd loadings;           // N x k
  Eigen::VectorXd specific_variance;  // N
  Eigen::VectorXd mean;               // N
  Eigen::MatrixXd factors;            // T x k, the draws behind the panel
  engine::ReturnsPanel panel;
};

inline PlantedModel simulate_planted_model(int T, int N, int k, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal;
  std::uniform_real_distribution<double> uniform(0.0, 1.0);
  PlantedModel m;
  m.loadings.resize(N, k);
  for (int i = 0; i < N; ++i)
    for (int j = 0; j < k; ++j)
      m.loadings(i, j) = 0.01 * (j == 0 ? 0.6 + 0.6 * uniform(rng) : normal(rng) * 0.7);
  m.specific_variance.resize(N);
  for (int i = 0; i < N; ++i) m.specific_variance[i] = std::pow(0.008 + 0.012 * uniform(rng), 2);
  m.mean = Eigen::VectorXd::Constant(N, 3e-4);
  m.factors.resize(T, k);
  m.panel.values.resize(T, N);
  for (int t = 0; t < T; ++t) {
    for (int j = 0; j < k; ++j) m.factors(t, j) = normal(rng);
    for (int i = 0; i < N; ++i)
      m.panel.values(t, i) = m.mean[i] + m.loadings.row(i).dot(m.factors.row(t)) +
                             std::sqrt(m.specific_variance[i]) * normal(rng);
    m.panel.dates.push_back(engine::Date::from_days(t));  // positions; no calendar is simulated
  }
  for (int i = 0; i < N; ++i) m.panel.assets.push_back("P" + std::to_string(1000 + i));
  return m;
}

}  // namespace factorwatch::testing
