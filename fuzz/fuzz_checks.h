// What every fuzz target checks besides "no crash, no sanitizer report, no leak": a
// reader either returns a value that keeps its documented promises or fails with a clean
// error (a known exception type, a message a person can act on, a line inside the input).
// A broken promise aborts, which libFuzzer reports as a crash with the input saved.
#pragma once

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <set>
#include <string>
#include <string_view>

#include "api_message.h"

namespace factorwatch::fuzz {

// Aborts with `what` when `ok` is false (assert() would vanish under NDEBUG).
inline void require(bool ok, const char* what) {
  if (ok) return;
  std::fprintf(stderr, "fuzz invariant broken: %s\n", what);
  std::abort();
}

inline std::string_view as_text(const std::uint8_t* data, std::size_t size) {
  return {reinterpret_cast<const char*>(data), size};
}

// A physical line of `text` can be named: 1 .. (newlines + 1). 0 means "no line".
inline void require_line_in(std::size_t line, std::string_view text) {
  const auto lines = static_cast<std::size_t>(std::count(text.begin(), text.end(), '\n')) + 1;
  require(line <= lines, "the error names a line past the end of the input");
}

// An error message must say something, and the daemon must be able to send it: build the
// RFC 9457 body exactly as a handler does and check that it is JSON again.
inline void require_clean_message(const std::string& message, const std::string& field = "") {
  require(!message.empty(), "an error without a message");
  const server::ApiResponse response = server::problem(400, message, "/fuzz", field);
  require(response.body && nlohmann::json::accept(*response.body), "the problem body is not JSON");
}

// A reader's error about its input: a line inside the input and a message the daemon can
// send as a problem.
template <class InputError>
void require_clean_input_error(const InputError& e, std::string_view text) {
  require_line_in(e.line(), text);
  require_clean_message(e.what(), e.field());
}

// What every reader of holdings promises of those it accepted (files in both formats,
// weights in a request body): at least one holding, each asset named once, every weight
// finite.
template <class Holdings>
void require_holdings_promises(const Holdings& holdings) {
  require(!holdings.empty(), "holdings read without a holding");
  std::set<std::string> seen;
  for (const auto& h : holdings) {
    require(!h.asset.empty(), "an empty asset name");
    require(std::isfinite(h.weight), "a weight that is not finite");
    require(seen.insert(h.asset).second, "an asset held twice");
  }
}

}  // namespace factorwatch::fuzz
