#include "drift_endpoints.h"

#include "alerts_view.h"
#include "drift_view.h"
#include "endpoint_helpers.h"
#include "factorwatch/pipeline/drift_query.h"
#include "history_view.h"
#include "window_drift_view.h"

namespace factorwatch::server {
ApiResponse drift_endpoint(const ApiContext& context, const ApiRequest& r) {
  const auto format = negotiate_format(r);
  if (const auto* p = std::get_if<ApiResponse>(&format)) return *p;
  const Format f = std::get<Format>(format);
  const auto range = range_query(r);
  if (const auto* p = std::get_if<ApiResponse>(&range)) return *p;
  const pipeline::RangeQuery& query = std::get<pipeline::RangeQuery>(range);
  const std::string against = r.parameter("against").value_or("");
  storage::Database& db = context.database();
  if (r.parameter("window")) {
    if (query.from || query.to)
      return problem(400, "query parameter 'window' compares one window; leave out 'from' and 'to'", r.path, "window");
    std::optional<engine::Date> window;
    if (auto bad = date_parameter(r, "window", window)) return *bad;
    pipeline::WindowDrift d;
    if (auto failed = pipeline::find_window_drift(db, query.model, window, against, d)) return failure_problem(r, *failed);
    const std::string filename = query.model + "-drift-" + d.record.as_of.iso() + "-" + d.record.against + ".csv";
    return f == Format::csv ? csv_response(window_drift_csv(d), filename, true) : json_response(window_drift_json(d));
  }
  pipeline::DriftSeries s;
  if (auto failed = pipeline::find_drift_series(db, query, against, s)) return failure_problem(r, *failed);
  return f == Format::csv ? csv_response(drift_csv(s), query.model + "-drift.csv", true) : json_response(drift_json(s));
}

ApiResponse history_endpoint(const ApiContext& context, const ApiRequest& r) {
  const auto format = negotiate_format(r);
  if (const auto* p = std::get_if<ApiResponse>(&format)) return *p;
  const Format f = std::get<Format>(format);
  const auto range = range_query(r);
  if (const auto* p = std::get_if<ApiResponse>(&range)) return *p;
  const pipeline::RangeQuery& query = std::get<pipeline::RangeQuery>(range);
  pipeline::AssetHistory h;
  if (auto failed = pipeline::find_asset_history(context.database(), query, r.parameter("asset").value_or(""), h))
    return failure_problem(r, *failed);
  return f == Format::csv ? csv_response(history_csv(h), query.model + "-history-" + file_part(h.asset) + ".csv", true)
                          : json_response(history_json(h));
}

ApiResponse alerts_endpoint(const ApiContext& context, const ApiRequest& r) {
  const auto format = negotiate_format(r);
  if (const auto* p = std::get_if<ApiResponse>(&format)) return *p;
  const Format f = std::get<Format>(format);
  const auto range = range_query(r);
  if (const auto* p = std::get_if<ApiResponse>(&range)) return *p;
  const pipeline::RangeQuery& query = std::get<pipeline::RangeQuery>(range);
  pipeline::AlertList a;
  if (auto failed = pipeline::find_alerts(context.database(), query, a)) return failure_problem(r, *failed);
  return f == Format::csv ? csv_response(alerts_csv(a), query.model + "-alerts.csv", true) : json_response(alerts_json(a));
}

}  // namespace factorwatch::server
