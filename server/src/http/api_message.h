// Requests and responses of the HTTP API as plain values, so that handlers are functions
// from a parsed request to a response and never see the HTTP library (only the daemon's
// glue, http_daemon.cpp, includes it).
#pragma once

#include <map>
#include <nlohmann/json.hpp>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

namespace factorwatch::server {

struct ApiRequest {
  std::string method;
  std::string path;                                // without the query
  std::map<std::string, std::string> query;        // first value of each parameter
  std::map<std::string, std::string> path_values;  // {name}, {id} of the route's path
  std::string accept;                              // the Accept header
  std::string accept_encoding;                     // the Accept-Encoding header
  std::string content_type;
  std::string_view body;     // raw body, or the multipart part "file"
  std::string upload_name;   // the filename of a multipart part, if any
  bool authorised = false;   // carried the access token

  // Query parameter or nullopt.
  std::optional<std::string> parameter(const std::string& name) const;
};

// Bodies larger than this are sent from their shared buffer as they are (the daemon's
// own gzip, if any, already applied); smaller ones may be compressed by the HTTP library.
inline constexpr std::size_t kLargeBody = 64 << 10;

struct ApiResponse {
  int status = 200;
  std::string content_type = "application/json";
  std::shared_ptr<const std::string> body;  // shared: cached bodies are sent without a copy
  std::vector<std::pair<std::string, std::string>> headers;

  void set_body(std::string text) { body = std::make_shared<const std::string>(std::move(text)); }
};

// RFC 9457 problem details. `field` names the query parameter, JSON member, header or
// CSV column at fault ("" when none); `extra` adds members (e.g. file, line).
ApiResponse problem(int status, const std::string& detail, const std::string& instance, const std::string& field = "",
                    const nlohmann::ordered_json& extra = nlohmann::ordered_json::object());

// The reason phrase of a status code (RFC 9110), used as the problem's title.
const char* status_title(int status);

}  // namespace factorwatch::server
