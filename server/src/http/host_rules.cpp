#include "host_rules.h"

#include <arpa/inet.h>

#include <algorithm>

namespace factorwatch::server {
namespace {

std::string lower(std::string_view s) {
  std::string out(s);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

// "::1" -> "[::1]"; other names as they are.
std::string bracketed(const std::string& name) {
  if (name.find(':') != std::string::npos && name.front() != '[') return "[" + name + "]";
  return name;
}

bool is_ip_literal(const std::string& name) {
  unsigned char buffer[16];
  if (name.size() > 2 && name.front() == '[' && name.back() == ']')
    return ::inet_pton(AF_INET6, name.substr(1, name.size() - 2).c_str(), buffer) == 1;
  return ::inet_pton(AF_INET, name.c_str(), buffer) == 1;
}

bool all_digits(std::string_view s) {
  return !s.empty() && s.size() <= 5 && std::all_of(s.begin(), s.end(), [](char c) { return c >= '0' && c <= '9'; });
}

}  // namespace

HostRules::HostRules(const std::string& address, int port, const std::vector<std::string>& extra) : port_(port) {
  names_ = {"127.0.0.1", "localhost", "[::1]"};
  const std::string listening = lower(address);
  if (listening == "0.0.0.0" || listening == "::" || listening == "[::]") {
    // A rebinding page can only make the browser send a name, never an address literal,
    // so every address of this machine is safe to accept.
    any_ip_literal_ = true;
  } else if (!listening.empty()) {
    add_name(bracketed(listening));
  }
  for (const std::string& name : extra)
    if (!name.empty()) add_name(bracketed(lower(name)));
}

void HostRules::add_name(const std::string& name) {
  if (std::find(names_.begin(), names_.end(), name) == names_.end()) names_.push_back(name);
}

bool HostRules::name_allowed(const std::string& name) const {
  if (std::find(names_.begin(), names_.end(), name) != names_.end()) return true;
  return any_ip_literal_ && is_ip_literal(name);
}

std::string HostRules::accepted_names() const {
  std::string text;
  for (const std::string& name : names_) text += (text.empty() ? "" : ", ") + name;
  if (any_ip_literal_) text += ", any address of this machine";
  return text;
}

std::optional<std::string> HostRules::authority_problem(std::string_view authority, bool port_must_be_given,
                                                        const char* what) const {
  std::string name;
  std::string_view port_text;
  if (!authority.empty() && authority.front() == '[') {
    const std::size_t close = authority.find(']');
    if (close == std::string_view::npos) return std::string(what) + " is not a name or address";
    name = lower(authority.substr(0, close + 1));
    const std::string_view rest = authority.substr(close + 1);
    if (!rest.empty()) {
      if (rest.front() != ':') return std::string(what) + " is not a name or address";
      port_text = rest.substr(1);
    }
  } else {
    const std::size_t colon = authority.find(':');
    name = lower(authority.substr(0, colon));
    if (colon != std::string_view::npos) port_text = authority.substr(colon + 1);
  }
  if (name.empty()) return std::string(what) + " names no host";
  if (!name_allowed(name))
    return std::string(what) + " names '" + name + "', which is not this daemon (accepted: " + accepted_names() +
           "; factorwatch serve --allow-host NAME adds one)";
  if (port_text.empty()) {
    if (port_must_be_given && port_ != 80) return std::string(what) + " names no port, and the daemon is on " + std::to_string(port_);
    return std::nullopt;
  }
  if (!all_digits(port_text) || std::stoi(std::string(port_text)) != port_)
    return std::string(what) + " names port " + std::string(port_text) + ", and the daemon is on " + std::to_string(port_);
  return std::nullopt;
}

std::optional<std::string> HostRules::host_problem(std::string_view host) const {
  while (!host.empty() && (host.back() == ' ' || host.back() == '\t')) host.remove_suffix(1);
  while (!host.empty() && (host.front() == ' ' || host.front() == '\t')) host.remove_prefix(1);
  return authority_problem(host, false, "header 'Host'");
}

std::optional<std::string> HostRules::origin_problem(std::string_view origin) const {
  constexpr std::string_view kScheme = "http://";
  if (origin.size() <= kScheme.size() || lower(origin.substr(0, kScheme.size())) != kScheme)
    return "header 'Origin': requests from other origins are refused ('" + std::string(origin.substr(0, 100)) +
           "' is not this daemon)";
  std::string_view authority = origin.substr(kScheme.size());
  if (!authority.empty() && authority.back() == '/') authority.remove_suffix(1);
  if (auto problem = authority_problem(authority, true, "header 'Origin'"))
    return *problem + "; requests from other origins are refused";
  return std::nullopt;
}

}  // namespace factorwatch::server
