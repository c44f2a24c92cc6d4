#include "service_endpoints.h"

#include "endpoint_helpers.h"
#include "factorwatch/storage/database.h"
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
  return json_response({{"status", "ready"},
                        {"schema_version", context.database().schema_version()},
                        {"database", shown}});
}

ApiResponse version_endpoint(const ApiContext&, const ApiRequest&) {
  return json_response({{"name", "factorwatch"},
                        {"version", FACTORWATCH_VERSION},
                        {"api", "v1"},
                        {"schema_version", storage::current_schema_version()}});
}

}  // namespace factorwatch::server
