#include "data_endpoints.h"

#include "endpoint_helpers.h"
#include "factorwatch/storage/assets.h"
#include "factorwatch/storage/ingest.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/returns_csv.h"
#include "text_format.h"

namespace factorwatch::server {
namespace {

// The name recorded for the upload and used in its messages: the `file` parameter, else
// the multipart file name, else "upload.csv". Only the last path component is kept.
std::string upload_name(const ApiRequest& r) {
  std::string name = r.parameter("file").value_or(r.upload_name);
  if (const auto slash = name.find_last_of("/\\"); slash != std::string::npos) name = name.substr(slash + 1);
  if (name.size() > 200) name.resize(200);
  return name.empty() ? "upload.csv" : name;
}

}  // namespace

ApiResponse upload_returns_endpoint(const ApiContext& context, const ApiRequest& r) {
  const auto prices = flag_parameter(r, "prices");
  if (const auto* p = std::get_if<ApiResponse>(&prices)) return *p;
  const auto log_returns = flag_parameter(r, "log_returns");
  if (const auto* p = std::get_if<ApiResponse>(&log_returns)) return *p;
  if (std::get<bool>(log_returns) && !std::get<bool>(prices))
    return problem(400, "query parameter 'log_returns' needs prices=true (log returns are computed from prices)",
                   r.path, "log_returns");

  storage::ReturnsReadOptions options;
  if (std::get<bool>(prices))
    options.values = std::get<bool>(log_returns) ? storage::ValuesInFile::prices_to_log_returns
                                                 : storage::ValuesInFile::prices_to_simple_returns;
  storage::IngestSource source;
  source.path = upload_name(r);
  source.values_in_file = storage::to_string(options.values);
  storage::ReturnsFile file;
  try {
    file = storage::read_returns_text(r.body, source.path, options);
  } catch (const storage::InputError& e) {
    return rejected_upload(r, e);
  } catch (const std::exception& e) {
    return problem(422, source.path + ": " + e.what(), r.path, "", {{"file", source.path}, {"database", "unchanged"}});
  }
  source.layout = file.layout;
  source.data_rows = file.data_rows;
  source.content_sha256 = file.content_sha256;  // of the body, the one copy the reader parsed
  const storage::LoadSummary s = storage::store_returns(context.database(), file.panel, source);

  nlohmann::ordered_json j;
  j["file"] = source.path;
  j["layout"] = source.layout;
  j["values"] = source.values_in_file;
  j["calendar"] = file.weekends ? "all days" : "weekdays";
  j["data_rows"] = source.data_rows;
  j["sha256"] = source.content_sha256;
  j["run_id"] = s.run_id;
  j["outcome"] = s.outcome;
  j["first_date"] = s.first_date;
  j["last_date"] = s.last_date;
  j["dates"] = s.dates_in_file;
  j["assets"] = s.assets_in_file;
  j["new_assets"] = s.new_assets;
  j["dates_new"] = s.dates_new;
  j["latest_date_before"] = s.latest_before;  // null: no returns were stored
  j["moved_forward"] = s.moved_forward;       // false: no date after latest_date_before (the feed has not moved on)
  j["values_new"] = s.values_new;
  j["values_unchanged"] = s.values_unchanged;
  j["values_corrected"] = s.values_corrected;
  j["windows_marked_stale"] = s.windows_marked_stale;
  j["seconds"] = s.seconds;
  return json_response(j);
}

ApiResponse list_assets_endpoint(const ApiContext& context, const ApiRequest& r) {
  const auto format = negotiate_format(r);
  if (const auto* p = std::get_if<ApiResponse>(&format)) return *p;
  const auto assets = storage::list_assets(context.database());
  if (std::get<Format>(format) == Format::csv) {
    std::string out = "asset,first_date,last_date\n";
    for (const auto& a : assets) out += csv_field(a.name) + "," + engine::iso_or_empty(a.first_date) + "," + engine::iso_or_empty(a.last_date) + "\n";
    return csv_response(std::move(out), "assets.csv", false);
  }
  nlohmann::ordered_json list = nlohmann::ordered_json::array();
  for (const auto& a : assets) list.push_back({{"asset", a.name}, {"first_date", a.first_date}, {"last_date", a.last_date}});
  return json_response({{"assets", std::move(list)}});
}

}  // namespace factorwatch::server
