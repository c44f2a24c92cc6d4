// The body of POST /v1/models/{name}/risk (server/src/risk_body.h) without a database:
// weights, a stored name, a benchmark and a trade, or a problem naming the member.
#include <cmath>
#include <set>

#include "fuzz_checks.h"
#include "risk_body.h"

using namespace factorwatch;

namespace {

void check_holdings(const std::optional<engine::Holdings>& holdings, bool may_be_empty) {
  if (!holdings) return;
  fuzz::require(may_be_empty || !holdings->empty(), "weights read without holdings");
  std::set<std::string> seen;
  for (const auto& h : *holdings) {
    fuzz::require(!h.asset.empty(), "an empty asset name");
    fuzz::require(std::isfinite(h.weight), "a weight that is not finite");
    fuzz::require(seen.insert(h.asset).second, "an asset held twice");
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  server::RiskRequest q;
  if (const auto bad = server::read_risk_body(fuzz::as_text(data, size), q)) {
    fuzz::require_clean_message(bad->message, bad->field);
    return 0;
  }
  fuzz::require(q.holdings.has_value() != !q.portfolio.empty(), "neither or both of weights and a portfolio name");
  check_holdings(q.holdings, false);
  check_holdings(q.benchmark_holdings, false);
  check_holdings(q.trade, false);
  return 0;
}
