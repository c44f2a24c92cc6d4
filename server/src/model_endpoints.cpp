#include "model_endpoints.h"

#include <regex>

#include "endpoint_helpers.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/windows.h"
#include "json_body.h"
#include "model_views.h"

namespace factorwatch::server {
namespace {

using nlohmann::json;

// The configuration's own messages name CLI options ("option '--min-coverage' = ...");
// over HTTP the same rule is about a JSON member ("member 'min_coverage' = ...").
std::pair<std::string, std::string> as_member_message(const std::string& message) {
  static const std::regex option("option '--([a-z-]+)'");
  std::smatch m;
  if (std::regex_search(message, m, option)) {
    std::string member = m[1];
    for (char& c : member)
      if (c == '-') c = '_';
    return {m.prefix().str() + "member '" + member + "'" + m.suffix().str(), member};
  }
  if (message.rfind("universe", 0) == 0) return {message, "universe"};
  return {message, ""};
}

// Applies the members of a model definition to `config`; a message naming the member
// when one is unknown or of the wrong type.
std::optional<std::pair<std::string, std::string>> apply_definition(const nlohmann::ordered_json& body, storage::ModelConfig& config) {
  auto bad = [](const std::string& member, const std::string& why) {
    return std::make_optional(std::make_pair("member '" + member + "': " + why, member));
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
    } else if (member == "smoothing_half_life" || member == "alert_below" || member == "alert_below_pinned") {
      if (!value.is_number()) return bad(member, "must be a number");
      (member == "smoothing_half_life" ? config.smoothing_half_life
       : member == "alert_below"       ? config.alert_below
                                       : config.alert_below_pinned) = value.get<double>();
    } else {
      return bad(member, "unknown member; known: universe, window, step, method, factors, basis, half_life, "
                         "min_coverage, first_as_of, rotation, kaiser_normalize, align_to, pinned_window, "
                         "smoothing_half_life, min_shared_assets, alert_below, alert_below_pinned");
    }
  }
  return std::nullopt;
}

}  // namespace

ApiResponse list_models_endpoint(const ApiContext& context, const ApiRequest& r) {
  const auto format = negotiate_format(r);
  if (const auto* p = std::get_if<ApiResponse>(&format)) return *p;
  storage::Database& db = context.database();
  if (std::get<Format>(format) == Format::csv)
    return csv_response(std::make_shared<const std::string>(models_csv(db)), "models.csv", false);
  return json_response(models_json(db));
}

ApiResponse show_model_endpoint(const ApiContext& context, const ApiRequest& r) {
  const std::string& name = r.path_values.at("name");
  storage::Database& db = context.database();
  const auto model = storage::find_model(db, name);
  if (!model) return unknown_model(r, name);
  return json_response(model_json(*model, storage::count_windows(db, model->id)));
}

ApiResponse define_model_endpoint(const ApiContext& context, const ApiRequest& r) {
  const std::string& name = r.path_values.at("name");
  std::string error;
  if (!storage::valid_model_name(name, &error)) return problem(400, "model name: " + error, r.path, "name");
  nlohmann::ordered_json body;
  try {
    body = r.body.empty() ? nlohmann::ordered_json::object() : parse_json_body(r.body);
  } catch (const std::invalid_argument& e) {
    return problem(400, std::string("body: ") + e.what(), r.path, "body");
  }
  if (!body.is_object()) return problem(400, "body: must be a JSON object of model settings", r.path, "body");

  storage::Database& db = context.database();
  storage::ModelConfig config;
  if (auto current = storage::find_model(db, name)) config = current->config;
  if (auto bad = apply_definition(body, config)) return problem(400, bad->first, r.path, bad->second);
  if (!config.IsValid(&error)) {
    const auto [message, member] = as_member_message(error);
    return problem(400, message, r.path, member);
  }
  const storage::SetModelOutcome outcome = storage::set_model(db, name, config);
  nlohmann::ordered_json j;
  j["model"] = outcome.model.name;
  j["version"] = outcome.model.version;
  j["created"] = outcome.created;
  j["new_version"] = outcome.new_version;
  j["configuration"] = outcome.model.config.to_json();
  return json_response(j, outcome.created ? 201 : 200);
}

ApiResponse start_refresh_endpoint(const ApiContext& context, const ApiRequest& r) {
  const std::string& name = r.path_values.at("name");
  if (!storage::find_model(context.database(), name)) return unknown_model(r, name);
  const RefreshJobs::Submitted job = context.jobs->submit(name);
  ApiResponse response = json_response(*context.jobs->job_json(job.id), 202);
  response.headers.emplace_back("Location", "/v1/jobs/" + std::to_string(job.id));
  return response;
}

ApiResponse list_jobs_endpoint(const ApiContext& context, const ApiRequest&) {
  return json_response(context.jobs->jobs_json());
}

ApiResponse show_job_endpoint(const ApiContext& context, const ApiRequest& r) {
  const std::string& text = r.path_values.at("id");
  long id = 0;
  try {
    std::size_t used = 0;
    id = std::stol(text, &used);
    if (used != text.size()) throw std::invalid_argument(text);
  } catch (const std::exception&) {
    return problem(400, "job id '" + text + "': must be a whole number", r.path, "id");
  }
  const auto job = context.jobs->job_json(id);
  if (!job) return problem(404, "job id " + text + ": no such job (GET /v1/jobs lists this daemon's jobs)", r.path, "id");
  return json_response(*job);
}

}  // namespace factorwatch::server
