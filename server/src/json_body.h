// Request bodies in JSON, read strictly: a member named twice in one object is an error
// (a JSON parser otherwise keeps one of the two values and drops the other in silence:
// for weights, a position would vanish), and parse errors give the line.
#pragma once

#include <nlohmann/json.hpp>
#include <string_view>

namespace factorwatch::server {

// Throws std::invalid_argument with "line N: ..." for text that is not JSON, and
// "member 'X' appears twice in one object" for a repeated member.
nlohmann::ordered_json parse_json_body(std::string_view text);

}  // namespace factorwatch::server
