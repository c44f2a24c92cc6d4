#include "factor_returns_endpoints.h"

#include "endpoint_helpers.h"
#include "factor_returns_view.h"
#include "factorwatch/pipeline/factor_returns_query.h"
#include "residuals_view.h"

namespace factorwatch::server {

ApiResponse factor_returns_endpoint(const ApiContext& context, const ApiRequest& r) {
  const auto format = negotiate_format(r);
  if (const auto* p = std::get_if<ApiResponse>(&format)) return *p;
  const Format f = std::get<Format>(format);
  const auto range = range_query(r);
  if (const auto* p = std::get_if<ApiResponse>(&range)) return *p;
  const pipeline::RangeQuery& query = std::get<pipeline::RangeQuery>(range);
  const std::string method = r.parameter("method").value_or("");
  storage::Database& db = context.database();
  if (const auto window_text = r.parameter("window")) {
    if (query.from || query.to)
      return problem(400, "query parameter 'window' shows one window; leave out 'from' and 'to'", r.path, "window");
    if (window_text->empty()) return problem(400, "query parameter 'window': give the window's as-of date", r.path, "window");
    std::optional<engine::Date> window;
    if (auto bad = date_parameter(r, "window", window)) return *bad;
    pipeline::WindowFactorReturns w;
    if (auto failed = pipeline::find_window_factor_returns(db, query.model, window, method, w)) return failure_problem(r, *failed);
    const std::string filename = query.model + "-factor-returns-" + w.window.window.as_of.iso() + "-" +
                                 engine::to_string(w.scores.method) + ".csv";
    return f == Format::csv ? csv_response(window_factor_returns_csv(w), filename, true) : json_response(window_factor_returns_json(w));
  }
  pipeline::FactorReturnSeriesAnswer s;
  if (auto failed = pipeline::find_factor_return_series(db, query, method, s)) return failure_problem(r, *failed);
  return f == Format::csv
             ? csv_response(factor_return_series_csv(s),
                        query.model + "-factor-returns-" + engine::to_string(s.series.method) + ".csv", true)
             : json_response(factor_return_series_json(s));
}

ApiResponse residuals_endpoint(const ApiContext& context, const ApiRequest& r) {
  const auto format = negotiate_format(r);
  if (const auto* p = std::get_if<ApiResponse>(&format)) return *p;
  const Format f = std::get<Format>(format);
  const std::string model = r.path_values.at("name");
  std::optional<engine::Date> window;
  if (auto bad = date_parameter(r, "window", window)) return *bad;
  pipeline::AssetResidualAnswer a;
  if (auto failed = pipeline::find_asset_residuals(context.database(), model, r.parameter("asset").value_or(""),
                                                   window, r.parameter("method").value_or(""), a))
    return failure_problem(r, *failed);
  const std::string filename = model + "-residuals-" + file_part(a.residuals.asset) + "-" + a.window.window.as_of.iso() +
                               "-" + engine::to_string(a.residuals.method) + ".csv";
  return f == Format::csv ? csv_response(residuals_csv(a), filename, true) : json_response(residuals_json(a));
}

}  // namespace factorwatch::server
