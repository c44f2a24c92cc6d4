#include "routes.h"

#include <cstdio>
#include <optional>
#include <exception>
#include <string>
#include <string_view>

#include "data_endpoints.h"
#include "drift_endpoints.h"
#include "factorwatch/storage/damaged_data.h"
#include "factorwatch/storage/identifier_rule.h"
#include "factorwatch/storage/timestamps.h"
#include "factor_returns_endpoints.h"
#include "model_endpoints.h"
#include "portfolio_endpoints.h"
#include "risk_endpoints.h"
#include "service_endpoints.h"
#include "window_endpoints.h"

namespace factorwatch::server {

const std::vector<Route>& api_routes() {
  static const std::vector<Route> routes = {
      {"GET", "/v1", false, true, "This list of routes", index_endpoint},
      {"GET", "/v1/health", false, true, "Readiness: 200 once the database is open and migrated, else 503",
       health_endpoint},
      {"GET", "/v1/version", false, true, "Program, API and database schema versions", version_endpoint},
      {"POST", "/v1/returns", true, false, "Upload a returns CSV (all or nothing, as factorwatch load)",
       upload_returns_endpoint, "file prices log_returns"},
      {"GET", "/v1/assets", false, false, "Stored assets with their first and last dates", list_assets_endpoint, "format"},
      {"GET", "/v1/models", false, false, "Models with their latest window", list_models_endpoint, "format"},
      {"GET", "/v1/models/{name}", false, false, "A model's configuration and window counts", show_model_endpoint},
      {"PUT", "/v1/models/{name}", true, false, "Define a model or change it (a change is a new version)",
       define_model_endpoint},
      {"DELETE", "/v1/models/{name}", true, false,
       "Delete a model: every version, window, alignment, drift row and alert", delete_model_endpoint},
      {"POST", "/v1/models/{name}/prune", true, false, "Delete the versions a change superseded, with their windows",
       prune_model_endpoint},
      {"POST", "/v1/models/{name}/rename", true, false, "Give a model a new name (body: {\"name\": NEW_NAME})",
       rename_model_endpoint},
      {"POST", "/v1/models/{name}/refresh", true, false, "Start a refresh as a background job",
       start_refresh_endpoint},
      {"GET", "/v1/models/{name}/windows", false, false, "A model's stored windows with fit statistics",
       list_windows_endpoint, "format"},
      {"GET", "/v1/models/{name}/exposures", false, false,
       "Loadings, communality and specific variance per asset of a window", exposures_endpoint, "as_of assets format"},
      {"GET", "/v1/models/{name}/specific-risk", false, false, "Specific and total volatility per asset of a window",
       specific_risk_endpoint, "as_of assets format"},
      {"GET", "/v1/models/{name}/drift", false, false,
       "Each window's factors compared with the previous and the pinned window, or one window asset by asset",
       drift_endpoint, "from to against window format"},
      {"GET", "/v1/models/{name}/history", false, false, "One asset's exposures and specific risk in every window",
       history_endpoint, "asset from to format"},
      {"GET", "/v1/models/{name}/alerts", false, false, "Windows whose factors drifted past the model's thresholds",
       alerts_endpoint, "from to format"},
      {"GET", "/v1/models/{name}/factor-returns", false, false,
       "Factor returns: each window's on its as-of date (a series), or every date of one window",
       factor_returns_endpoint, "from to window method format"},
      {"GET", "/v1/models/{name}/residuals", false, false,
       "One asset's residual (specific) returns over a window's dates", residuals_endpoint, "asset window method format"},
      {"GET", "/v1/models/{name}/risk", false, false,
       "A stored portfolio's risk in a window: total, systematic, specific, by factor and by asset",
       stored_portfolio_risk_endpoint, "portfolio as_of holdings_as_of benchmark no_benchmark trade by_asset format"},
      {"POST", "/v1/models/{name}/risk", false, false,
       "The risk of weights sent in the body (with a benchmark and a trade, if any)", posted_weights_risk_endpoint, "as_of by_asset format"},
      {"GET", "/v1/portfolios", false, false, "Stored portfolios and benchmarks", list_portfolios_endpoint, "format"},
      {"GET", "/v1/portfolios/{name}", false, false, "One portfolio's holdings for an as-of date",
       show_portfolio_endpoint, "as_of format"},
      {"PUT", "/v1/portfolios/{name}", true, false, "Store holdings (CSV asset,weight or JSON) for an as-of date",
       store_portfolio_endpoint, "as_of benchmark"},
      {"DELETE", "/v1/portfolios/{name}", true, false, "Remove a portfolio (every as-of date, or one)",
       delete_portfolio_endpoint, "as_of"},
      {"GET", "/v1/jobs", false, false, "Background jobs since the daemon started", list_jobs_endpoint},
      {"GET", "/v1/jobs/{id}", false, false, "One job: state, progress and summary", show_job_endpoint},
  };
  return routes;
}

std::vector<std::string> route_parameters(const Route& route) {
  std::vector<std::string> names;
  std::string name;
  for (const char* c = route.parameters ? route.parameters : ""; ; ++c) {
    if (*c == ' ' || *c == '\0') {
      if (!name.empty()) names.push_back(name);
      name.clear();
      if (*c == '\0') break;
    } else {
      name += *c;
    }
  }
  return names;
}

namespace {

// Whether `name` is one of the route's parameters: a word of its list, found without
// building the list (this runs on every request).
bool takes_parameter(const Route& route, const std::string& name) {
  const std::string_view list = route.parameters ? route.parameters : "";
  for (std::size_t at = list.find(name); at != std::string_view::npos; at = list.find(name, at + 1)) {
    const std::size_t end = at + name.size();
    if ((at == 0 || list[at - 1] == ' ') && (end == list.size() || list[end] == ' ')) return true;
  }
  return false;
}

// The first query parameter the route does not read, as a 400 naming it.
std::optional<ApiResponse> unknown_parameter(const Route& route, const ApiRequest& request) {
  for (const auto& entry : request.query) {
    const std::string& name = entry.first;
    if (!name.empty() && takes_parameter(route, name)) continue;
    const std::vector<std::string> known = route_parameters(route);
    std::string list;
    for (const std::string& k : known) list += (list.empty() ? "" : ", ") + k;
    const std::string shown = storage::printable_text(name);
    return problem(400,
                   known.empty() ? "query parameter '" + shown + "': this route takes no query parameters"
                                 : "query parameter '" + shown + "' is not one this route takes (" + list + ")",
                   request.path, shown);
  }
  return std::nullopt;
}

}  // namespace

ApiResponse call_route(const Route& route, const ApiContext& context, const ApiRequest& request) {
  if (auto refused = unknown_parameter(route, request)) return *refused;
  try {
    return route.handler(context, request);
  } catch (const storage::DamagedData& e) {
    // The database file, not the request, is at fault: say which row, and how to see them all.
    std::fprintf(stderr, "%s error in %s %s: %s\n", storage::utc_timestamp().c_str(), request.method.c_str(),
                 request.path.c_str(), e.what());
    return problem(500, std::string(e.what()) + " (factorwatch verify lists every damaged row)", request.path);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "%s error in %s %s: %s\n", storage::utc_timestamp().c_str(), request.method.c_str(),
                 request.path.c_str(), e.what());
    return problem(500, std::string("internal error: ") + e.what(), request.path);
  }
}

}  // namespace factorwatch::server
