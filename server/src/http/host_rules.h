// Which Host and Origin values the daemon answers. A web page can make a browser send
// requests to 127.0.0.1 by pointing its own name at that address (DNS rebinding); the
// browser then sends the page's name in Host and treats the answers as the page's own.
// Accepting only the names of the listening address closes that door, as browsers'
// guidance on private-network access recommends for local services; refusing foreign
// Origins stops pages from sending requests at all, even ones they cannot read.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace factorwatch::server {

class HostRules {
 public:
  // `address` is the listening address (--address), `port` the bound port, `extra` the
  // names the operator allows in addition (--allow-host), e.g. a machine name used with
  // --address 0.0.0.0.
  HostRules(const std::string& address, int port, const std::vector<std::string>& extra);

  // nullopt when `host` (a Host field value, "name" or "name:port") is ours, else why
  // not. A request without Host is the caller's business (HTTP/1.0).
  std::optional<std::string> host_problem(std::string_view host) const;
  // nullopt when `origin` (an Origin field value) is this daemon's own, else why not.
  std::optional<std::string> origin_problem(std::string_view origin) const;

  // The names accepted, for messages and the banner.
  std::string accepted_names() const;

 private:
  void add_name(const std::string& name);  // once each, for the message
  bool name_allowed(const std::string& lower_case_name) const;
  std::optional<std::string> authority_problem(std::string_view authority, bool port_required_to_match,
                                               const char* what) const;

  std::vector<std::string> names_;  // lower case; IPv6 in brackets
  bool any_ip_literal_ = false;     // listening on every address (0.0.0.0 or ::)
  int port_;
};

}  // namespace factorwatch::server
