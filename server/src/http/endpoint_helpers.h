// What the endpoint handlers share: choosing JSON or CSV, building responses (with the
// caution where risk numbers are shown) and reading typed query parameters.
#pragma once

#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <variant>

#include "api_message.h"
#include "factorwatch/storage/input_error.h"

namespace factorwatch::pipeline {
struct QueryFailure;
}

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

// A failed drift, history, alerts, factor-returns or residuals lookup as a problem naming
// the query parameter: 400 for bad input, 404 for what is not stored (with the refresh
// route when a refresh would store it); an unknown model names the path's {name}.
ApiResponse query_problem(const ApiRequest& request, const pipeline::QueryFailure& failure);

// A true/false query parameter (true, false, 1, 0, yes, no); a 400 naming it otherwise.
std::variant<bool, ApiResponse> flag_parameter(const ApiRequest& request, const std::string& name);

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
