// The HTTP API's handlers called in process: the daemon's context (api_context.h) on a
// temporary data directory, and each request routed through the daemon's route table
// (routes.h) and call_route, as the daemon answers it, without a socket, a child process
// or curl. What only the daemon's glue does (the request head's limits, Host rules, gzip,
// the socket's deadlines) stays with the end-to-end tests (daemon_test, http_hardening_test).
#pragma once

#include <atomic>
#include <cctype>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "api_context.h"
#include "api_message.h"
#include "factorwatch/storage/data_directory.h"
#include "refresh_jobs.h"
#include "response_cache.h"
#include "risk_model_cache.h"
#include "routes.h"

namespace factorwatch::testing {

// %XX decoded, '+' as a space (a query string as the daemon's HTTP library decodes it).
inline std::string percent_decoded(const std::string& text) {
  std::string out;
  for (std::size_t i = 0; i < text.size(); ++i) {
    if (text[i] == '+') {
      out += ' ';
    } else if (text[i] == '%' && i + 2 < text.size() && std::isxdigit(static_cast<unsigned char>(text[i + 1])) &&
               std::isxdigit(static_cast<unsigned char>(text[i + 2]))) {
      out += static_cast<char>(std::stoi(text.substr(i + 1, 2), nullptr, 16));
      i += 2;
    } else {
      out += text[i];
    }
  }
  return out;
}

class InProcessApi {
 public:
  explicit InProcessApi(const std::string& data_dir)
      : database_path_(storage::database_path(data_dir)), jobs_(database_path_) {
    context_.data_dir = data_dir;
    context_.database_path = database_path_;
    context_.max_upload_bytes = std::size_t(64) << 20;
    context_.jobs = &jobs_;
    context_.cache = &cache_;
    context_.risk_models = &risk_models_;
    context_.state = &state_;
  }

  const server::ApiContext& context() const { return context_; }

  // `target` is a path with an optional query ("/v1/models/m/drift?from=2021-02-30"),
  // percent-encoded as on the wire. A route that does not exist is a 404 problem, as the
  // daemon answers it; authorised: the request carried the access token.
  server::ApiResponse call(const std::string& method, const std::string& target, const std::string& body = "",
                           const std::string& content_type = "", bool authorised = true,
                           const std::string& accept = "") {
    server::ApiRequest r;
    r.method = method;
    const std::size_t question = target.find('?');
    r.path = percent_decoded(target.substr(0, question));
    if (question != std::string::npos) {
      std::string query = target.substr(question + 1);
      std::size_t start = 0;
      while (start <= query.size()) {
        std::size_t end = query.find('&', start);
        if (end == std::string::npos) end = query.size();
        const std::string pair = query.substr(start, end - start);
        const std::size_t equals = pair.find('=');
        if (!pair.empty())
          r.query.emplace(percent_decoded(pair.substr(0, equals)),
                          equals == std::string::npos ? "" : percent_decoded(pair.substr(equals + 1)));
        start = end + 1;
      }
    }
    r.accept = accept;
    r.content_type = content_type;
    body_ = body;
    r.body = body_;
    r.authorised = authorised;
    for (const server::Route& route : server::api_routes()) {
      if (method != route.method) continue;
      if (auto values = match(route.path, r.path)) {
        r.path_values = std::move(*values);
        return server::call_route(route, context_, r);
      }
    }
    return server::problem(404, "no route " + method + " " + r.path, r.path);
  }

 private:
  // The {name} values when `path` fits the route's template, one segment per placeholder.
  static std::optional<std::map<std::string, std::string>> match(const std::string& route, const std::string& path) {
    const auto segments = [](const std::string& p) {
      std::vector<std::string> out;
      std::size_t start = 1;
      while (start <= p.size()) {
        std::size_t end = p.find('/', start);
        if (end == std::string::npos) end = p.size();
        out.push_back(p.substr(start, end - start));
        start = end + 1;
      }
      return out;
    };
    const auto want = segments(route), have = segments(path);
    if (want.size() != have.size()) return std::nullopt;
    std::map<std::string, std::string> values;
    for (std::size_t i = 0; i < want.size(); ++i) {
      if (want[i].size() > 2 && want[i].front() == '{' && want[i].back() == '}') {
        if (have[i].empty()) return std::nullopt;
        values[want[i].substr(1, want[i].size() - 2)] = have[i];
      } else if (want[i] != have[i]) {
        return std::nullopt;
      }
    }
    return values;
  }

  std::string database_path_;
  server::RefreshJobs jobs_;
  server::ResponseCache cache_{std::size_t(64) << 20};
  server::RiskModelCache risk_models_{server::kRiskModelWindows};
  std::atomic<server::DaemonState> state_{server::DaemonState::ready};
  server::ApiContext context_;
  std::string body_;  // the request's body outlives the call (ApiRequest holds a view)
};

}  // namespace factorwatch::testing
