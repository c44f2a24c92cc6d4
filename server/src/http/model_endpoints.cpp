#include "model_endpoints.h"

#include "endpoint_helpers.h"
#include "factorwatch/pipeline/model_checks.h"
#include "factorwatch/storage/identifier_rule.h"
#include "factorwatch/storage/model_lifecycle.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/windows.h"
#include "json_body.h"
#include "model_definition.h"
#include "model_views.h"

namespace factorwatch::server {

ApiResponse list_models_endpoint(const ApiContext& context, const ApiRequest& r) {
  const auto format = negotiate_format(r);
  if (const auto* p = std::get_if<ApiResponse>(&format)) return *p;
  storage::Database& db = context.database();
  if (std::get<Format>(format) == Format::csv)
    return csv_response(models_csv(db), "models.csv", false);
  return json_response(models_json(db));
}

ApiResponse show_model_endpoint(const ApiContext& context, const ApiRequest& r) {
  const std::string& name = r.path_values.at("name");
  storage::Database& db = context.database();
  const auto model = storage::find_model(db, name);
  if (!model) return unknown_model(r, name);
  return json_response(model_json(*model, storage::count_windows(db, model->id), pipeline::model_standing(db, *model)));
}

ApiResponse define_model_endpoint(const ApiContext& context, const ApiRequest& r) {
  const std::string& name = r.path_values.at("name");
  std::string error;
  if (!storage::valid_model_name(name, &error)) return problem(400, "model name: " + error, r.path, "name");
  storage::Database& db = context.database();
  storage::ModelConfig config;
  if (auto current = storage::find_model(db, name)) config = current->config;
  if (auto bad = read_model_definition(r.body, config)) return problem(400, bad->message, r.path, bad->field);
  const storage::SetModelOutcome outcome = storage::set_model(db, name, config);
  nlohmann::ordered_json j;
  j["model"] = outcome.model.name;
  j["version"] = outcome.model.version;
  j["created"] = outcome.created;
  j["new_version"] = outcome.new_version;
  j["configuration"] = outcome.model.config.to_json();
  const auto warning = pipeline::factors_warning(db, outcome.model.config);
  j["warning"] = warning ? nlohmann::ordered_json(*warning) : nlohmann::ordered_json();
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

namespace {

// A refresh of the model queued or running in this daemon: 409, naming the job.
std::optional<ApiResponse> refresh_in_progress(const ApiContext& context, const ApiRequest& r, const std::string& name,
                                               const char* what) {
  const auto job = context.jobs ? context.jobs->active_job(name) : std::nullopt;
  if (!job) return std::nullopt;
  return problem(409, std::string("cannot ") + what + " model '" + name + "' while its refresh (job " +
                          std::to_string(*job) + ") is queued or running; GET /v1/jobs/" + std::to_string(*job) +
                          " says when it ends",
                 r.path, "name");
}

nlohmann::ordered_json removed_json(const std::string& name, const storage::RemovedModelData& removed) {
  nlohmann::ordered_json j;
  j["model"] = name;
  j["versions_deleted"] = removed.versions;
  j["windows_deleted"] = removed.windows;
  return j;
}

}  // namespace

ApiResponse delete_model_endpoint(const ApiContext& context, const ApiRequest& r) {
  const std::string& name = r.path_values.at("name");
  if (auto busy = refresh_in_progress(context, r, name, "delete")) return *busy;
  const auto removed = storage::delete_model(context.database(), name);
  if (!removed) return unknown_model(r, name);
  return json_response(removed_json(name, *removed));
}

ApiResponse prune_model_endpoint(const ApiContext& context, const ApiRequest& r) {
  const std::string& name = r.path_values.at("name");
  if (auto busy = refresh_in_progress(context, r, name, "prune")) return *busy;
  const auto removed = storage::prune_model(context.database(), name);
  if (!removed) return unknown_model(r, name);
  nlohmann::ordered_json j = removed_json(name, *removed);
  j["version_kept"] = storage::find_model(context.database(), name)->version;
  return json_response(j);
}

ApiResponse rename_model_endpoint(const ApiContext& context, const ApiRequest& r) {
  const std::string& name = r.path_values.at("name");
  std::string new_name;
  try {
    const nlohmann::ordered_json body = parse_json_body(r.body);
    if (!body.is_object()) return problem(400, "the body must be a JSON object: {\"name\": \"NEW_NAME\"}", r.path, "");
    for (const auto& [member, value] : body.items())
      if (member != "name")
        return problem(400, "member '" + storage::printable_text(member) + "' is not one this request takes (name)",
                       r.path, member);
    if (!body.contains("name") || !body["name"].is_string())
      return problem(400, "member 'name': give the new name as a string", r.path, "name");
    new_name = body["name"].get<std::string>();
  } catch (const std::invalid_argument& e) {
    return problem(400, std::string("the body is not JSON: ") + e.what(), r.path, "");
  }
  if (auto busy = refresh_in_progress(context, r, name, "rename")) return *busy;
  try {
    if (!storage::rename_model(context.database(), name, new_name)) return unknown_model(r, name);
  } catch (const std::invalid_argument& e) {
    return problem(storage::find_model(context.database(), new_name) ? 409 : 400, e.what(), r.path, "name");
  }
  return json_response({{"model", new_name}, {"renamed_from", name}});
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
