#include "model_definition.h"

#include <string>
#include <utility>

#include "endpoint_helpers.h"

namespace factorwatch::server {
namespace {

using json = nlohmann::ordered_json;

// Applies the members of a model definition to `config`; a message naming the member
// when one is unknown or of the wrong type.
std::optional<BodyProblem> apply_definition(const json& body, storage::ModelConfig& config) {
  auto bad = [](const std::string& member, const std::string& why) {
    return std::make_optional(BodyProblem{"member '" + member + "': " + why, member});
  };
  for (const auto& [member, value] : body.items()) {
    if (member == "universe") {
      if (value.is_string() && value.get<std::string>() == "all") {
        config.universe.clear();
      } else if (value.is_array()) {
        std::vector<std::string> names;
        for (const auto& v : value) {
          if (!v.is_string()) return bad(member, "must be an array of asset names, or \"all\"");
          names.push_back(v.get<std::string>());
        }
        config.universe = std::move(names);
      } else {
        return bad(member, "must be an array of asset names, or \"all\"");
      }
    } else if (member == "window" || member == "step" || member == "factors") {
      if (!value.is_number_integer()) return bad(member, "must be a whole number");
      const auto n = value.get<long long>();
      if (n < -1000000000LL || n > 1000000000LL) return bad(member, "out of range");
      (member == "window" ? config.window : member == "step" ? config.step : config.factors) = static_cast<int>(n);
    } else if (member == "method") {
      const auto method = value.is_string() ? engine::parse_method(value.get<std::string>()) : std::nullopt;
      if (!method) return bad(member, "must be \"pca\", \"principal-axis\" or \"ml\"");
      config.method = *method;
    } else if (member == "basis") {
      const auto basis = value.is_string() ? engine::parse_basis(value.get<std::string>()) : std::nullopt;
      if (!basis) return bad(member, "must be \"covariance\" or \"correlation\"");
      config.basis = *basis;
    } else if (member == "half_life") {
      if (value.is_null() || (value.is_number() && value.get<double>() == 0)) {
        config.weighting = engine::Weighting::equal;
        config.half_life = 0;
      } else if (value.is_number()) {
        config.weighting = engine::Weighting::ewma;
        config.half_life = value.get<double>();
      } else {
        return bad(member, "must be a number of dates (null or 0: equal weights)");
      }
    } else if (member == "min_coverage") {
      if (!value.is_number()) return bad(member, "must be a number in (0, 1]");
      config.min_coverage = value.get<double>();
    } else if (member == "first_as_of") {
      if (value.is_null()) config.first_as_of.clear();
      else if (value.is_string()) config.first_as_of = value.get<std::string>();
      else return bad(member, "must be a date yyyy-mm-dd, or null");
    } else if (member == "rotation") {
      const auto rotation = value.is_string() ? engine::parse_rotation(value.get<std::string>()) : std::nullopt;
      if (!rotation) return bad(member, "must be \"none\", \"varimax\" or \"promax\"");
      config.rotation = *rotation;
    } else if (member == "kaiser_normalize") {
      if (!value.is_boolean()) return bad(member, "must be true or false");
      config.kaiser_normalize = value.get<bool>();
    } else if (member == "align_to") {
      const auto align_to = value.is_string() ? storage::parse_align_to(value.get<std::string>()) : std::nullopt;
      if (!align_to) return bad(member, "must be \"previous\", \"pinned\" or \"smoothed\"");
      config.align_to = *align_to;
    } else if (member == "pinned_window") {
      if (value.is_null()) config.pinned_window.clear();
      else if (value.is_string()) config.pinned_window = value.get<std::string>();
      else return bad(member, "must be a date yyyy-mm-dd, or null (the model's first window)");
    } else if (member == "min_shared_assets") {
      if (!value.is_number_integer()) return bad(member, "must be a whole number");
      const auto n = value.get<long long>();
      if (n < -1000000000LL || n > 1000000000LL) return bad(member, "out of range");
      config.min_shared_assets = static_cast<int>(n);
    } else if (member == "smoothing_half_life" || member == "alert_below" || member == "alert_below_pinned" ||
               member == "tolerance") {
      if (!value.is_number()) return bad(member, "must be a number");
      (member == "smoothing_half_life" ? config.smoothing_half_life
       : member == "alert_below"       ? config.alert_below
       : member == "tolerance"         ? config.tolerance
                                       : config.alert_below_pinned) = value.get<double>();
    } else {
      return bad(member, "unknown member; known: universe, window, step, method, factors, basis, half_life, "
                         "min_coverage, first_as_of, rotation, kaiser_normalize, align_to, pinned_window, "
                         "smoothing_half_life, min_shared_assets, alert_below, alert_below_pinned, tolerance");
    }
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
