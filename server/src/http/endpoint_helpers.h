// What the endpoint handlers share: choosing JSON or CSV, building responses (with the
// caution where risk numbers are shown) and reading typed query parameters.
#pragma once

#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <variant>

#include "api_message.h"
#include "factorwatch/engine/date.h"
#include "factorwatch/engine/failure.h"
#include "factorwatch/pipeline/request_dates.h"
#include "factorwatch/storage/input_error.h"

namespace factorwatch::server {

enum class Format { json, csv };

// `format=json|csv` wins; else `Accept: text/csv` asks for CSV; else JSON. A bad
// `format` value is a 400 naming the parameter.
std::variant<Format, ApiResponse> negotiate_format(const ApiRequest& request);

ApiResponse json_response(const nlohmann::ordered_json& j, int status = 200);

// A CSV body with the caution in the Factorwatch-Caution header (the body's first line
// carries it too) and a file name for browsers and spreadsheet programs.
ApiResponse csv_response(std::shared_ptr<const std::string> body, const std::string& filename, bool risk_numbers);

// The same for a body rendered as text.
ApiResponse csv_response(std::string body, const std::string& filename, bool risk_numbers);

// The HTTP status of each kind of failure (the one map): 400 bad input, 404 a name or a
// window that is not stored, 409 a window whose fit failed, 422 weights that cannot be
// measured.
int http_status(engine::FailureKind kind);

// A failure from below as a problem (RFC 9457): the field named as the request sent it
// ("query parameter 'from'", or "member 'weights'" when `in_body`), its value and the
// rule, then the route that helps (the listing of models or portfolios, the refresh). An
// unknown model names the path's {name}; the universe list names itself.
ApiResponse failure_problem(const ApiRequest& request, const engine::Failure& failure, bool in_body = false);

// The failure's text without a hint: "member 'min_coverage' = 2.000000: must be in (0, 1]".
std::string failure_text(const engine::Failure& failure, bool in_body);

// A true/false query parameter (true, false, 1, 0, yes, no); a 400 naming it otherwise.
std::variant<bool, ApiResponse> flag_parameter(const ApiRequest& request, const std::string& name);

// A date query parameter, read once here (pipeline::read_date): absent or "" is no date; a
// text that is not a date yyyy-mm-dd is the 400 returned.
std::optional<ApiResponse> date_parameter(const ApiRequest& request, const std::string& name,
                                          std::optional<engine::Date>& date);

// The path's model with the query parameters `from` and `to` read as dates; or the 400.
std::variant<pipeline::RangeQuery, ApiResponse> range_query(const ApiRequest& request);

// 422 for a rejected upload (a returns or holdings file): the reader's message, the file,
// line and field it names, and that the database is unchanged.
ApiResponse rejected_upload(const ApiRequest& request, const storage::InputError& error);

// A file name part from free text (asset names may hold anything): letters, digits, '.',
// '_' and '-' kept, anything else '_'.
std::string file_part(const std::string& text);

// 404 for a model name the database does not hold, naming the path's {name}.
ApiResponse unknown_model(const ApiRequest& request, const std::string& name);

// The name of the response header that carries the caution on CSV responses.
inline constexpr const char* kCautionHeader = "Factorwatch-Caution";

}  // namespace factorwatch::server
