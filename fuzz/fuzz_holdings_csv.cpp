// The holdings CSV reader (asset,weight; storage/src/holdings_csv.cpp) on any text.
#include "factorwatch/storage/input_error.h"
#include "fuzz_checks.h"
#include "holdings_file.h"

using namespace factorwatch;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text = fuzz::as_text(data, size);
  try {
    const auto file = storage::detail::read_holdings_csv(text, "fuzz.csv");
    fuzz::require_holdings_promises(file.holdings);
  } catch (const storage::InputError& e) {
    fuzz::require_clean_input_error(e, text);
  }
  return 0;
}
