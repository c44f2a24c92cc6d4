#include "service_endpoints.h"

#include "endpoint_helpers.h"
#include "factorwatch/pipeline/model_standing.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/date_key.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/returns_span.h"
#include "routes.h"

#ifndef FACTORWATCH_VERSION
#define FACTORWATCH_VERSION "unknown"
#endif

namespace factorwatch::server {

ApiResponse index_endpoint(const ApiContext&, const ApiRequest&) {
  nlohmann::ordered_json routes = nlohmann::ordered_json::array();
  for (const Route& route : api_routes())
    routes.push_back({{"method", route.method}, {"path", route.path}, {"summary", route.summary}, {"write", route.write}});
  return json_response({{"api", "v1"}, {"routes", std::move(routes)}});
}

ApiResponse health_endpoint(const ApiContext& context, const ApiRequest& r) {
  switch (context.state->load()) {
    case DaemonState::starting:
      return problem(503, "not ready: the database is being opened and migrated", r.path);
    case DaemonState::stopping:
      return problem(503, "shutting down", r.path);
    case DaemonState::ready:
      break;
  }
  // The database's full path names the data directory (and often the user): only a
  // client holding the token sees it; anyone else sees the file's name.
  const std::string& path = context.database_path;
  const std::string shown = r.authorised ? path : path.substr(path.find_last_of('/') + 1);
  // Models behind the stored returns (a refresh would fit windows now): a nightly refresh
  // that did not run, or failed. Their names only for a client holding the token.
  storage::Database& db = context.database();
  nlohmann::ordered_json behind = nlohmann::ordered_json::array();
  std::size_t behind_count = 0;
  for (const storage::ModelVersion& m : storage::list_models(db)) {
    const pipeline::ModelStanding s = pipeline::model_standing(db, m);
    if (!s.behind()) continue;
    ++behind_count;
    if (r.authorised) behind.push_back({{"model", m.name}, {"latest_as_of", s.latest_window}, {"pending_windows", s.pending}});
  }
  const std::vector<engine::Date> dates = storage::stored_dates(db);
  nlohmann::ordered_json j = {{"status", "ready"}, {"schema_version", db.schema_version()}, {"database", shown}};
  j["latest_stored_date"] = dates.empty() ? nlohmann::ordered_json() : nlohmann::ordered_json(dates.back());
  j["models_behind"] = behind_count;
  if (r.authorised) j["behind"] = std::move(behind);
  return json_response(j);
}

ApiResponse version_endpoint(const ApiContext&, const ApiRequest&) {
  return json_response({{"name", "factorwatch"},
                        {"version", FACTORWATCH_VERSION},
                        {"api", "v1"},
                        {"schema_version", storage::current_schema_version()}});
}

}  // namespace factorwatch::server
