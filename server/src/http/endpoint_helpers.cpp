#include "endpoint_helpers.h"

#include <cctype>

#include "factorwatch/engine/caution.h"

namespace factorwatch::server {

std::variant<Format, ApiResponse> negotiate_format(const ApiRequest& r) {
  if (auto format = r.parameter("format")) {
    if (*format == "json") return Format::json;
    if (*format == "csv") return Format::csv;
    return problem(400, "query parameter 'format' = '" + *format + "': must be json or csv", r.path, "format");
  }
  // A client that names CSV but not JSON gets CSV (RFC 9110 content negotiation, kept
  // simple: no quality values are weighed).
  if (r.accept.find("text/csv") != std::string::npos && r.accept.find("application/json") == std::string::npos)
    return Format::csv;
  return Format::json;
}

ApiResponse json_response(const nlohmann::ordered_json& j, int status) {
  ApiResponse r;
  r.status = status;
  r.content_type = "application/json";
  r.set_body(j.dump(-1, ' ', false, nlohmann::ordered_json::error_handler_t::replace));
  return r;
}

ApiResponse csv_response(std::shared_ptr<const std::string> body, const std::string& filename, bool risk_numbers) {
  ApiResponse r;
  r.content_type = "text/csv; charset=utf-8";
  r.body = std::move(body);
  r.headers.emplace_back("Content-Disposition", "inline; filename=\"" + filename + "\"");
  if (risk_numbers) r.headers.emplace_back(kCautionHeader, engine::kCaution);
  return r;
}

ApiResponse csv_response(std::string body, const std::string& filename, bool risk_numbers) {
  return csv_response(std::make_shared<const std::string>(std::move(body)), filename, risk_numbers);
}

int http_status(engine::FailureKind kind) {
  switch (kind) {
    case engine::FailureKind::bad_input: return 400;
    case engine::FailureKind::unknown_name:
    case engine::FailureKind::not_stored: return 404;
    case engine::FailureKind::not_usable: return 409;
    case engine::FailureKind::rejected: return 422;
  }
  return 400;
}

ApiResponse failure_problem(const ApiRequest& r, const engine::Failure& f, bool in_body) {
  const int status = http_status(f.kind);
  if (f.field == "model") {
    const std::string hint = f.kind == engine::FailureKind::unknown_name ? " (GET /v1/models lists them)" : "";
    return problem(status, failure_text(f, false) + hint, r.path, "name");
  }
  std::string hint;
  if (f.refresh_helps && r.path_values.count("name"))
    hint = "; start a refresh with POST /v1/models/" + r.path_values.at("name") + "/refresh";
  else if (f.kind == engine::FailureKind::unknown_name &&
           (f.field == "portfolio" || f.field == "holdings_as_of" || f.field == "benchmark"))
    hint = " (GET /v1/portfolios lists them)";
  return problem(status, failure_text(f, in_body) + hint, r.path, f.field);
}

std::string failure_text(const engine::Failure& f, bool in_body) {
  const std::string subject = f.field.empty() || f.field == "model" ? ""
                              : f.field == "universe"              ? "universe"
                              : in_body                            ? "member '" + f.field + "'"
                                                                   : "query parameter '" + f.field + "'";
  return engine::describe(f, subject);
}

std::variant<bool, ApiResponse> flag_parameter(const ApiRequest& r, const std::string& name) {
  const auto value = r.parameter(name);
  if (!value) return false;
  if (*value == "true" || *value == "1" || *value == "yes" || value->empty()) return true;
  if (*value == "false" || *value == "0" || *value == "no") return false;
  return problem(400, "query parameter '" + name + "' = '" + *value + "': must be true or false", r.path, name);
}

std::optional<ApiResponse> date_parameter(const ApiRequest& r, const std::string& name,
                                          std::optional<engine::Date>& date) {
  if (auto f = pipeline::read_date(name, r.parameter(name).value_or(""), date)) return failure_problem(r, *f);
  return std::nullopt;
}

std::variant<pipeline::RangeQuery, ApiResponse> range_query(const ApiRequest& r) {
  pipeline::RangeQuery q;
  q.model = r.path_values.at("name");
  if (auto bad = date_parameter(r, "from", q.from)) return *bad;
  if (auto bad = date_parameter(r, "to", q.to)) return *bad;
  return q;
}

std::string file_part(const std::string& text) {
  std::string out = text;
  for (char& c : out)
    if (!std::isalnum(static_cast<unsigned char>(c)) && c != '.' && c != '_' && c != '-') c = '_';
  return out;
}

ApiResponse rejected_upload(const ApiRequest& r, const storage::InputError& e) {
  nlohmann::ordered_json extra = {{"file", e.path()}};
  if (e.line() > 0) extra["line"] = e.line();
  extra["database"] = "unchanged";
  return problem(422, e.what(), r.path, e.field(), extra);
}

ApiResponse unknown_model(const ApiRequest& r, const std::string& name) {
  return failure_problem(r, engine::failure(engine::FailureKind::unknown_name, "model", "", "no model named '" + name + "'"));
}

}  // namespace factorwatch::server
