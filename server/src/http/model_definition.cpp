#include "model_definition.h"

#include <string>
#include <utility>

#include "endpoint_helpers.h"
#include "factorwatch/storage/model_fields.h"

namespace factorwatch::server {
namespace {

using json = nlohmann::ordered_json;

// Applies the members of a model definition to `config` through the field table; a
// message naming the member when one is unknown or of the wrong type.
std::optional<BodyProblem> apply_definition(const json& body, storage::ModelConfig& config) {
  for (const auto& [member, value] : body.items()) {
    const storage::ModelField* field = storage::find_model_field(member);
    if (!field || field->kind == storage::FieldKind::follows)
      return BodyProblem{failure_text(storage::unknown_member(member), true), member};
    // Over HTTP a half-life of 0 also means equal weights (docs/api.md); on the command
    // line it is refused, --equal-weights says so.
    const bool equal_weights = field->kind == storage::FieldKind::half_life && value.is_number() && value == 0;
    if (auto refused = storage::set_model_field(*field, config, equal_weights ? json() : value))
      return BodyProblem{failure_text(*refused, true), member};
  }
  return std::nullopt;
}

}  // namespace

std::optional<BodyProblem> read_model_definition(std::string_view text, storage::ModelConfig& config) {
  json body;
  try {
    body = text.empty() ? json::object() : parse_json_body(text);
  } catch (const std::invalid_argument& e) {
    return BodyProblem{std::string("body: ") + e.what(), "body"};
  }
  if (!body.is_object()) return BodyProblem{"body: must be a JSON object of model settings", "body"};
  if (auto bad = apply_definition(body, config)) return bad;
  if (const auto f = config.FirstFailure())
    return BodyProblem{failure_text(*f, true), f->field};
  return std::nullopt;
}

}  // namespace factorwatch::server
