#include "api_message.h"

namespace factorwatch::server {

std::optional<std::string> ApiRequest::parameter(const std::string& name) const {
  const auto it = query.find(name);
  if (it == query.end()) return std::nullopt;
  return it->second;
}

const char* status_title(int status) {
  switch (status) {
    case 200: return "OK";
    case 201: return "Created";
    case 202: return "Accepted";
    case 400: return "Bad Request";
    case 401: return "Unauthorized";
    case 403: return "Forbidden";
    case 404: return "Not Found";
    case 405: return "Method Not Allowed";
    case 408: return "Request Timeout";
    case 409: return "Conflict";
    case 413: return "Content Too Large";
    case 414: return "URI Too Long";
    case 415: return "Unsupported Media Type";
    case 416: return "Range Not Satisfiable";
    case 421: return "Misdirected Request";
    case 431: return "Request Header Fields Too Large";
    case 422: return "Unprocessable Content";
    case 500: return "Internal Server Error";
    case 501: return "Not Implemented";
    case 503: return "Service Unavailable";
    default: return status < 500 ? "Client Error" : "Server Error";
  }
}

ApiResponse problem(int status, const std::string& detail, const std::string& instance, const std::string& field,
                    const nlohmann::ordered_json& extra) {
  nlohmann::ordered_json j;
  j["type"] = "about:blank";
  j["title"] = status_title(status);
  j["status"] = status;
  j["detail"] = detail;
  j["instance"] = instance;
  if (!field.empty()) j["field"] = field;
  for (const auto& [name, value] : extra.items()) j[name] = value;
  ApiResponse r;
  r.status = status;
  r.content_type = "application/problem+json";
  // A detail may quote what the client sent (a path, a parameter): bytes that are not
  // UTF-8 become U+FFFD instead of an exception (which, in the library's error handler,
  // used to abort the daemon).
  r.set_body(j.dump(-1, ' ', false, nlohmann::ordered_json::error_handler_t::replace));
  return r;
}

}  // namespace factorwatch::server
