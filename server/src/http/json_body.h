// Request bodies in JSON, read strictly: a member named twice in one object is an error
// (a JSON parser otherwise keeps one of the two values and drops the other in silence:
// for weights, a position would vanish), and parse errors give the line.
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <string_view>

namespace factorwatch::server {

// Throws std::invalid_argument with "line N: ..." for text that is not JSON, "not JSON:
// ... number overflow ..." for a number beyond a double (1e400), and "member 'X' appears
// twice in one object" for a repeated member.
nlohmann::ordered_json parse_json_body(std::string_view text);

// What is wrong with a request body: the message and the member it names ("" for the
// whole body). Handlers turn it into a 400 problem.
struct BodyProblem {
  std::string message;
  std::string field;
};

}  // namespace factorwatch::server
