// The drift alerts of a model as CSV and JSON: the same bytes from `factorwatch alerts`
// and from GET .../alerts. Both carry the caution.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "factorwatch/pipeline/drift_query.h"

namespace factorwatch::server {

// How many of the assets that moved most the table and the CSV name per alert (JSON has
// every one the refresh kept).
inline constexpr std::size_t kMoversShown = 5;

// The caution line, one header row (as_of, against, against_as_of, factor, congruence,
// threshold, moved_most), one row per flagged factor.
std::string alerts_csv(const pipeline::AlertList& alerts);

// {caution, model, version, thresholds, alerts: [...]}.
nlohmann::ordered_json alerts_json(const pipeline::AlertList& alerts);

// "P1003 (+1.250); P1017 (-0.980)": the first `count` movers with their standardized
// change, rounded to 3 decimals (a label for people; JSON has the exact numbers).
std::string movers_text(const std::vector<engine::AssetMove>& movers, std::size_t count);

}  // namespace factorwatch::server
