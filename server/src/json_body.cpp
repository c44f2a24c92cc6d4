#include "json_body.h"

#include <algorithm>
#include <set>
#include <stdexcept>
#include <string>
#include <vector>

namespace factorwatch::server {

nlohmann::ordered_json parse_json_body(std::string_view text) {
  using json = nlohmann::ordered_json;
  std::vector<std::set<std::string>> members;  // of each object being read, innermost last
  std::string repeated;
  const json::parser_callback_t check = [&](int, json::parse_event_t event, json& parsed) {
    if (event == json::parse_event_t::object_start) {
      members.emplace_back();
    } else if (event == json::parse_event_t::object_end) {
      members.pop_back();
    } else if (event == json::parse_event_t::key && repeated.empty() && !members.empty()) {
      const std::string key = parsed.get<std::string>();
      if (!members.back().insert(key).second) repeated = key;
    }
    return true;
  };
  json j;
  try {
    j = json::parse(text.begin(), text.end(), check);
  } catch (const json::parse_error& e) {
    const auto end = text.begin() + static_cast<std::ptrdiff_t>(std::min<std::size_t>(e.byte, text.size()));
    const auto line = 1 + std::count(text.begin(), end, '\n');
    throw std::invalid_argument("line " + std::to_string(line) + ": not JSON: " + e.what());
  } catch (const json::out_of_range& e) {
    // A number beyond a double (1e400): the parser reports no position for it.
    throw std::invalid_argument(std::string("not JSON: ") + e.what());
  }
  if (!repeated.empty()) throw std::invalid_argument("member '" + repeated + "' appears twice in one object");
  return j;
}

}  // namespace factorwatch::server
