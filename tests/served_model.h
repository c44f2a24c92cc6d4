// A window's served factor model read back from `factorwatch exposures --format json`, so
// that end-to-end tests check the surfaces against the numbers the surfaces themselves
// publish (loadings, factor covariance, specific variances), formed densely.
#pragma once

#include <Eigen/Dense>
#include <map>
#include <nlohmann/json.hpp>
#include <string>

namespace factorwatch::testing {

struct ServedModel {
  std::map<std::string, int> row;  // asset -> row of the matrices
  Eigen::MatrixXd loadings, phi;
  Eigen::VectorXd psi;
  Eigen::MatrixXd sigma() const { return loadings * phi * loadings.transpose() + Eigen::MatrixXd(psi.asDiagonal()); }
};

inline ServedModel served_model(const nlohmann::json& exposures) {
  ServedModel m;
  const auto& assets = exposures["assets"];
  const int n = static_cast<int>(assets.size());
  const int k = static_cast<int>(exposures["factor_covariance"].size());
  m.loadings.resize(n, k);
  m.psi.resize(n);
  for (int i = 0; i < n; ++i) {
    m.row[assets[i]["asset"]] = i;
    for (int j = 0; j < k; ++j) m.loadings(i, j) = assets[i]["loadings"][j];
    m.psi(i) = assets[i]["specific_variance"];
  }
  m.phi.resize(k, k);
  for (int r = 0; r < k; ++r)
    for (int c = 0; c < k; ++c) m.phi(r, c) = exposures["factor_covariance"][r][c];
  return m;
}

}  // namespace factorwatch::testing
