#include "window_endpoints.h"

#include "endpoint_helpers.h"
#include "exposures_view.h"
#include "factorwatch/pipeline/window_query.h"
#include "factorwatch/storage/models.h"
#include "gzip_body.h"
#include "model_views.h"
#include "specific_risk_view.h"
#include "text_format.h"

namespace factorwatch::server {
namespace {

using Render = std::string (*)(const pipeline::SelectedWindow&, Format);

// The path every one-window endpoint takes: pick the window from its stamp, serve a
// cached body when the very same window was rendered before, else read and render.
ApiResponse window_endpoint(const ApiContext& context, const ApiRequest& r, const char* what, Render render) {
  const auto format = negotiate_format(r);
  if (const auto* p = std::get_if<ApiResponse>(&format)) return *p;
  const Format f = std::get<Format>(format);
  const std::string assets = r.parameter("assets").value_or("");
  pipeline::WindowQuery query{r.path_values.at("name"), std::nullopt, split_list(assets)};
  if (auto bad = date_parameter(r, "as_of", query.as_of)) return *bad;
  if (!assets.empty() && query.assets.empty())
    return problem(400, "query parameter 'assets': no asset names (give them comma-separated)", r.path, "assets");

  storage::Database& db = context.database();
  const pipeline::WindowPick pick = pipeline::pick_window(db, query);
  if (pick.failure) return failure_problem(r, *pick.failure);
  // Lists of assets are not cached: their reasons for missing assets follow the returns
  // stored, which the window stamp does not cover.
  const bool cacheable = query.assets.empty();
  const std::string key = std::string(what) + (f == Format::csv ? "|csv|" : "|json|") +
                          std::to_string(pick.model.id) + "|" + pick.model.name + "|" + pick.stamp.key() + "|" +
                          engine::iso_or_empty(query.as_of) +
                          "|" + pick.note;
  std::shared_ptr<const std::string> body = cacheable ? context.cache->find(key) : nullptr;
  if (!body) {
    body = std::make_shared<const std::string>(render(pipeline::read_picked_window(db, pick, query), f));
    if (cacheable) context.cache->put(key, body);
  }
  // A whole window is 1-2 MB of digits; gzip takes it to about 40%, compressed once and
  // then served from the cache like the plain body.
  bool gzipped = false;
  if (body->size() > kLargeBody && accepts_gzip(r.accept_encoding)) {
    const std::string gzip_key = key + "|gzip";
    std::shared_ptr<const std::string> packed = cacheable ? context.cache->find(gzip_key) : nullptr;
    if (!packed) {
      packed = std::make_shared<const std::string>(gzip_compress(*body));
      if (cacheable) context.cache->put(gzip_key, packed);
    }
    body = std::move(packed);
    gzipped = true;
  }
  ApiResponse response;
  if (f == Format::csv) {
    response = csv_response(std::move(body), query.model + "-" + what + "-" + pick.stamp.as_of.iso() + ".csv", true);
  } else {
    response.body = std::move(body);
  }
  response.headers.emplace_back("Vary", "Accept, Accept-Encoding");
  if (gzipped) response.headers.emplace_back("Content-Encoding", "gzip");
  return response;
}

std::string render_exposures(const pipeline::SelectedWindow& s, Format f) {
  return f == Format::csv ? exposures_csv(s) : exposures_json(s).dump(-1, ' ', false, nlohmann::ordered_json::error_handler_t::replace);
}

std::string render_specific_risk(const pipeline::SelectedWindow& s, Format f) {
  return f == Format::csv ? specific_risk_csv(s) : specific_risk_json(s).dump(-1, ' ', false, nlohmann::ordered_json::error_handler_t::replace);
}

}  // namespace

ApiResponse exposures_endpoint(const ApiContext& context, const ApiRequest& r) {
  return window_endpoint(context, r, "exposures", render_exposures);
}

ApiResponse specific_risk_endpoint(const ApiContext& context, const ApiRequest& r) {
  return window_endpoint(context, r, "specific-risk", render_specific_risk);
}

ApiResponse list_windows_endpoint(const ApiContext& context, const ApiRequest& r) {
  const auto format = negotiate_format(r);
  if (const auto* p = std::get_if<ApiResponse>(&format)) return *p;
  const std::string& name = r.path_values.at("name");
  storage::Database& db = context.database();
  const auto model = storage::find_model(db, name);
  if (!model) return unknown_model(r, name);
  const auto windows = storage::list_windows(db, model->id);
  if (std::get<Format>(format) == Format::csv)
    return csv_response(windows_csv(windows), name + "-windows.csv", true);
  return json_response(windows_json(*model, windows));
}

}  // namespace factorwatch::server
