// Specific risk per asset of a window, as rows, CSV and JSON: shared by
// `factorwatch specific-risk` and the daemon. CSV and JSON carry the caution.
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "factorwatch/engine/frequency.h"
#include "factorwatch/pipeline/window_query.h"

namespace factorwatch::server {

struct SpecificRiskRow {
  std::string asset;
  double specific_variance, specific_volatility, specific_volatility_annual;
  double total_variance, total_volatility_annual, specific_share;
  bool heywood;
};

// Modelled variance of asset i: diag(L Phi L') + specific variance, annualised by
// sqrt(periods per year) (square-root-of-time, common practice).
std::vector<SpecificRiskRow> specific_risk_rows(const pipeline::SelectedWindow& s, const engine::Frequency& frequency);

std::string specific_risk_csv(const pipeline::SelectedWindow& s);
nlohmann::ordered_json specific_risk_json(const pipeline::SelectedWindow& s);

}  // namespace factorwatch::server
