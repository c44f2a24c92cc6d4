// The model definition of PUT /v1/models/{name} (server/src/http/model_definition.h), applied
// over the default configuration without a database: a valid configuration or a problem.
#include "fuzz_checks.h"
#include "model_definition.h"

using namespace factorwatch;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  storage::ModelConfig config;
  if (const auto bad = server::read_model_definition(fuzz::as_text(data, size), config)) {
    fuzz::require_clean_message(bad->message, bad->field);
    return 0;
  }
  fuzz::require(!config.FirstFailure(), "an accepted definition is not a valid configuration");
  (void)config.to_json().dump();  // stored as JSON: must serialise
  return 0;
}
