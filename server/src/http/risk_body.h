// The body of POST /v1/models/{name}/risk (weights, or a stored portfolio's name, with an
// optional benchmark and trade) and the weights it and the query string carry. Kept apart
// from the handler so that it can be checked, and fuzzed, without a database.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <variant>

#include "factorwatch/engine/risk.h"
#include "factorwatch/pipeline/risk_query.h"
#include "json_body.h"

namespace factorwatch::server {

// Weights in a request: {"ASSET": weight, ...} or [{"asset": "ASSET", "weight": w}, ...].
// The error names the member and, inside it, the asset or the element.
std::variant<engine::Holdings, std::string> holdings_member(const nlohmann::ordered_json& value,
                                                            const std::string& member);

// Fills the portfolio, benchmark and trade of `q` from the body; a problem names the member.
std::optional<BodyProblem> read_risk_body(std::string_view body, pipeline::RiskRequest& q);

}  // namespace factorwatch::server
