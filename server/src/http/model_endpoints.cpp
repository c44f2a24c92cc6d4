#include "model_endpoints.h"

#include "endpoint_helpers.h"
#include "factorwatch/pipeline/model_checks.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/windows.h"
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
  return json_response(model_json(*model, storage::count_windows(db, model->id)));
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
