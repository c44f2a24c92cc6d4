// The body of PUT /v1/models/{name}: a JSON object of model settings applied over the
// model's current configuration (or the defaults for a new model). Kept apart from the
// handler so that it can be checked, and fuzzed, without a database.
#pragma once

#include <optional>
#include <string_view>

#include "factorwatch/storage/models.h"
#include "json_body.h"

namespace factorwatch::server {

// Applies `body` to `config`. An empty body changes nothing. A problem (not JSON, a member
// named twice, unknown or of the wrong type, or a configuration that is not valid) names
// the member; `config` is then partly changed and must not be stored.
std::optional<BodyProblem> read_model_definition(std::string_view body, storage::ModelConfig& config);

}  // namespace factorwatch::server
