// One asset's served exposures window by window as CSV and JSON: the same bytes from
// `factorwatch history` and from GET .../history. Both carry the caution.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "factorwatch/pipeline/drift_query.h"

namespace factorwatch::server {

// The caution line, one header row (as_of, present, exposure_f1.., communality,
// specific_variance, specific_volatility, alignment), one row per window; the numbers
// are empty cells in windows the asset is not in.
std::string history_csv(const pipeline::AssetHistory& history);

// {caution, model, version, asset, factors, windows: [...]}.
nlohmann::ordered_json history_json(const pipeline::AssetHistory& history);

}  // namespace factorwatch::server
