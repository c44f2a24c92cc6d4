// One asset's residual (specific) returns over a window as CSV, JSON and a terminal
// table: the same CSV and JSON from `factorwatch residuals` and GET .../residuals. Every
// output names the scoring method the residuals rest on and carries the caution.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "factorwatch/pipeline/factor_returns_query.h"

namespace factorwatch::server {

// The caution line, one heading comment line (model, window, asset, its mean, loadings and
// specific variance, the method), the header row date,residual, one row per date of the
// window; a date without a residual (no return, or not scored) has an empty cell.
std::string residuals_csv(const pipeline::AssetResidualAnswer& answer);
// {caution, model, version, as_of, first_date, stale, note?, asset, method, description,
//  factor_basis, mean, loadings, specific_variance, specific_volatility,
//  residuals: [{date, residual}]}.
nlohmann::ordered_json residuals_json(const pipeline::AssetResidualAnswer& answer);
std::string residuals_table(const pipeline::AssetResidualAnswer& answer);

// "residual returns: return - mean - loadings . factor returns, with factor returns (...)".
std::string residuals_description(engine::ScoreMethod method);

}  // namespace factorwatch::server
