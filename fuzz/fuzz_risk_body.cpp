// The body of POST /v1/models/{name}/risk (server/src/http/risk_body.h) without a database:
// weights, a stored name, a benchmark and a trade, or a problem naming the member.
#include "fuzz_checks.h"
#include "risk_body.h"

using namespace factorwatch;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  pipeline::RiskRequest q;
  if (const auto bad = server::read_risk_body(fuzz::as_text(data, size), q)) {
    fuzz::require_clean_message(bad->message, bad->field);
    return 0;
  }
  fuzz::require(q.holdings.has_value() != !q.portfolio.empty(), "neither or both of weights and a portfolio name");
  for (const auto* holdings : {&q.holdings, &q.benchmark_holdings, &q.trade})
    if (*holdings) fuzz::require_holdings_promises(**holdings);
  return 0;
}
