// The holdings JSON reader ({"as_of", "benchmark", "weights" | "holdings"};
// storage/src/holdings_json.cpp) on any text.
#include "factorwatch/storage/input_error.h"
#include "fuzz_checks.h"
#include "holdings_file.h"

using namespace factorwatch;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text = fuzz::as_text(data, size);
  try {
    const auto file = storage::detail::read_holdings_json(text, "fuzz.json");
    fuzz::require_holdings_promises(file.holdings);
    fuzz::require_line_in(file.as_of_line, text);
    fuzz::require_line_in(file.benchmark_line, text);
  } catch (const storage::InputError& e) {
    fuzz::require_clean_input_error(e, text);
  }
  return 0;
}
