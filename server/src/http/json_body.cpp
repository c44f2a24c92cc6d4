#include "json_body.h"

#include <algorithm>
#include <set>
#include <stdexcept>
#include <string>
#include <vector>

namespace factorwatch::server {

namespace {

// Request bodies are flat (a model's options, weights by asset): a few levels. Deep
// nesting only costs memory (16 MB of '[' built 1.1 GB of empty arrays before this
// check), so it is refused before the parser builds anything.
constexpr int kMaxDepth = 32;

// The deepest nesting of arrays and objects, outside strings; stops counting past the
// limit.
int nesting_depth(std::string_view text) {
  int depth = 0, deepest = 0;
  bool in_string = false, escaped = false;
  for (const char c : text) {
    if (in_string) {
      if (escaped) escaped = false;
      else if (c == '\\') escaped = true;
      else if (c == '"') in_string = false;
    } else if (c == '"') {
      in_string = true;
    } else if (c == '[' || c == '{') {
      deepest = std::max(deepest, ++depth);
      if (deepest > kMaxDepth) break;
    } else if (c == ']' || c == '}') {
      --depth;
    }
  }
  return deepest;
}

}  // namespace

nlohmann::ordered_json parse_json_body(std::string_view text) {
  using json = nlohmann::ordered_json;
  if (nesting_depth(text) > kMaxDepth)
    throw std::invalid_argument("arrays and objects are nested more than " + std::to_string(kMaxDepth) +
                                " levels deep");
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
  } catch (const json::exception& e) {
    // A number beyond the range of a double (1e400) is refused as out of range.
    throw std::invalid_argument(std::string("not usable JSON: ") + e.what());
  }
  if (!repeated.empty()) throw std::invalid_argument("member '" + repeated + "' appears twice in one object");
  return j;
}

}  // namespace factorwatch::server
