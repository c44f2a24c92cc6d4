// The strict JSON body parser every JSON request goes through (server/src/http/json_body.h):
// a value, or std::invalid_argument with a message the daemon can send.
#include "fuzz_checks.h"
#include "json_body.h"

using namespace factorwatch;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  try {
    const auto value = server::parse_json_body(fuzz::as_text(data, size));
    // What was accepted can be written back (the daemon echoes parts of bodies).
    (void)value.dump(-1, ' ', false, nlohmann::ordered_json::error_handler_t::replace);
  } catch (const std::invalid_argument& e) {
    fuzz::require_clean_message(e.what(), "body");
  }
  return 0;
}
