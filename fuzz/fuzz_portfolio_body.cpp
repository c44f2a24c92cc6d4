// The body of PUT /v1/portfolios/{name} as the handler reads it (storage::
// parse_portfolio_text: CSV or JSON by its first character, a BOM skipped), without a
// database. The first byte picks whether the query string gives an as-of date and a
// benchmark, which then win over the file's.
#include <cmath>

#include "endpoint_helpers.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/portfolios.h"
#include "factorwatch/engine/date.h"
#include "fuzz_checks.h"

using namespace factorwatch;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size == 0) return 0;
  storage::PortfolioFileOptions options{"book", std::nullopt, ""};
  if (data[0] & 1) options.as_of = engine::Date::from_iso("2024-06-28");
  if (data[0] & 2) options.benchmark = "index";
  const std::string text(fuzz::as_text(data + 1, size - 1));
  try {
    const storage::Portfolio p = storage::parse_portfolio_text(text, "request body", options);
    fuzz::require(!p.holdings.empty(), "a portfolio without holdings");
    // The as-of date is a Date, so a real day; it is the option's when given.
    fuzz::require(!options.as_of || p.as_of == *options.as_of, "the option's as-of date was not kept");
    fuzz::require(p.benchmark.empty() || storage::is_portfolio_name(p.benchmark), "a benchmark that is not a name");
    fuzz::require(p.benchmark != p.name, "a portfolio is its own benchmark");
    fuzz::require(p.content_sha256.size() == 64, "no content hash");
  } catch (const storage::InputError& e) {
    fuzz::require_clean_input_error(e, text);
    server::ApiRequest request;
    request.path = "/v1/portfolios/book";
    const server::ApiResponse response = server::rejected_upload(request, e);
    fuzz::require(response.body && nlohmann::json::accept(*response.body), "the 422 body is not JSON");
  }
  return 0;
}
