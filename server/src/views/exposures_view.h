// A window's exposures as CSV and JSON: the same bytes from `factorwatch exposures` and
// from the daemon's exposures endpoint. Both carry the caution.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "factorwatch/pipeline/window_query.h"

namespace factorwatch::server {

// "# caution" and "# model" comment lines, then asset,f1..fk,communality,
// specific_variance,uniqueness,heywood.
std::string exposures_csv(const pipeline::SelectedWindow& s);

nlohmann::ordered_json exposures_json(const pipeline::SelectedWindow& s);

}  // namespace factorwatch::server
