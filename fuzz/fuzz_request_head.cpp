// A request as it reaches the daemon: the head check of the connection gate
// (server/src/http/request_head.h) on raw bytes, then, for a head it lets through, the path
// and query decoded as the HTTP library decodes them, the Host and Origin rules, the
// format choice and the problem body that quotes the path (building that body from a
// byte that is not UTF-8 used to abort the daemon).
#include "endpoint_helpers.h"
#include "fuzz_checks.h"
#include "host_rules.h"
#include "request_head.h"

// Last: through <resolv.h> it defines the macro _res (see server/src/http/http_daemon.cpp).
#include <httplib.h>

using namespace factorwatch;

namespace {

// The value of the first field `name` (case-insensitive) in a head that passed the check.
std::string field_value(std::string_view head, std::string_view name) {
  std::size_t pos = head.find('\n');
  while (pos != std::string_view::npos && pos + 1 < head.size()) {
    const std::size_t start = pos + 1;
    const std::size_t end = head.find('\n', start);
    std::string_view line = head.substr(start, (end == std::string_view::npos ? head.size() : end) - start);
    const std::size_t colon = line.find(':');
    if (colon == name.size()) {
      bool same = true;
      for (std::size_t i = 0; i < colon && same; ++i) same = (line[i] | 0x20) == (name[i] | 0x20);
      if (same) {
        std::string_view value = line.substr(colon + 1);
        while (!value.empty() && (value.front() == ' ' || value.front() == '\t')) value.remove_prefix(1);
        while (!value.empty() && (value.back() == '\r' || value.back() == ' ' || value.back() == '\t')) value.remove_suffix(1);
        return std::string(value);
      }
    }
    pos = end;
  }
  return "";
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view input = fuzz::as_text(data, size);
  const server::HeadLimits limits;
  const server::HeadCheck check = server::check_request_head(input, limits);
  if (check.state == server::HeadCheck::State::refused) {
    fuzz::require(check.status >= 400 && check.status < 500, "a refusal that is not a 4xx");
    fuzz::require_clean_message(check.detail, check.field);
    return 0;
  }
  if (check.state == server::HeadCheck::State::incomplete) {
    fuzz::require(input.size() <= limits.head_bytes, "an incomplete head past the head limit was not refused");
    return 0;
  }
  fuzz::require(check.length <= input.size() && check.length <= limits.head_bytes, "a complete head of a wrong length");
  const std::string_view head = input.substr(0, check.length);

  // The request target, as the library splits and decodes it.
  std::size_t start = 0;
  while (start < head.size() && (head[start] == '\r' || head[start] == '\n')) ++start;
  const std::size_t first_space = head.find(' ', start);
  const std::size_t line_end = head.find('\n', start);
  const std::size_t second_space = head.rfind(' ', line_end);
  fuzz::require(first_space != std::string_view::npos && second_space > first_space, "a complete head without a target");
  const std::string target(head.substr(first_space + 1, second_space - first_space - 1));
  const std::size_t question = target.find('?');
  server::ApiRequest request;
  request.method = std::string(head.substr(start, first_space - start));
  request.path = httplib::detail::decode_url(target.substr(0, question), false);
  if (question != std::string::npos) {
    httplib::Params params;
    httplib::detail::parse_query_text(target.substr(question + 1), params);
    for (const auto& [name, value] : params) request.query.emplace(name, value);
  }
  request.accept = field_value(head, "Accept");

  // The 404 body quotes the decoded path, any bytes at all: it must still be JSON.
  const server::ApiResponse missing = server::problem(404, "no such route: " + request.method + " " + request.path,
                                                      request.path);
  fuzz::require(missing.body && nlohmann::json::accept(*missing.body), "the 404 body is not JSON");
  // A format the daemon does not know is a 400 problem, never an exception.
  const auto format = server::negotiate_format(request);
  if (const auto* refused = std::get_if<server::ApiResponse>(&format))
    fuzz::require(refused->status == 400 && nlohmann::json::accept(*refused->body), "a bad format is not a 400 problem");

  // Host and Origin: an answer either way, and a refusal that can be sent.
  const server::HostRules rules("127.0.0.1", 8750, {"risk-box.example"});
  if (const auto why = rules.host_problem(field_value(head, "Host"))) fuzz::require_clean_message(*why, "Host");
  if (const auto why = rules.origin_problem(field_value(head, "Origin"))) fuzz::require_clean_message(*why, "Origin");
  return 0;
}
