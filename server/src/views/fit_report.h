// Turning a fit into the two output formats. Both carry the caution (engine::kCaution).
#pragma once

#include <Eigen/Dense>
#include <nlohmann/json.hpp>
#include <optional>
#include <ostream>
#include <string>

#include "factorwatch/engine/fit.h"

namespace factorwatch::server {

// What the fit was run on: facts the FactorFit itself does not hold.
struct FitSource {
  std::string kind;  // "returns" or "covariance"
  std::string path;
  // Returns files only: the window's first and last dates, and the dates in the file.
  std::string first_date;
  std::string last_date;
  Eigen::Index dates_in_file = 0;
  std::optional<double> half_life;  // EWMA half-life in dates, when weighted
  // Covariance files only: the observations behind the matrix.
  double observations = 0;
};

nlohmann::ordered_json fit_report_json(const engine::FactorFit& fit, const FitSource& source);

void write_fit_report_table(std::ostream& out, const engine::FactorFit& fit, const FitSource& source);

}  // namespace factorwatch::server
