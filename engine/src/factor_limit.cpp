// The identification limits of factor_limit.h: pure arithmetic on the sample's size, in
// the values library so that a model's definition can be checked where no fit runs.
#include "factorwatch/engine/factor_limit.h"

#include <algorithm>

namespace factorwatch::engine {
namespace {

// Twice the likelihood-ratio test's degrees of freedom, exact in integers.
long long twice_dof(long long p, long long k) { return (p - k) * (p - k) - (p + k); }

std::string plural(long long n, const char* one, const char* many) {
  return std::to_string(n) + " " + (n == 1 ? one : many);
}

}  // namespace

int ledermann_bound(long long p) {
  // (p - k)^2 - (p + k) falls as k grows from 0 to p, so the bound is where it turns negative.
  long long k = 0;
  while (k + 1 <= p && twice_dof(p, k + 1) >= 0) ++k;
  return static_cast<int>(k);
}

FactorLimit factor_limit(Method method, long long assets, long long dates) {
  FactorLimit limit;
  limit.most = static_cast<int>(std::max(0LL, std::min(assets, dates) - 1));
  if (method == Method::max_likelihood) {
    const int bound = ledermann_bound(assets);
    if (bound < limit.most) {
      limit.most = bound;
      limit.ledermann = true;
    }
  }
  return limit;
}

std::string window_sample(long long assets, long long dates) {
  return "a window of " + plural(assets, "asset", "assets") + " and " + plural(dates, "date", "dates");
}

std::optional<Failure> too_many_factors(Method method, int factors, long long assets, long long dates,
                                        const std::string& sample) {
  const FactorLimit limit = factor_limit(method, assets, dates);
  if (factors <= limit.most) return std::nullopt;
  // Only maximum likelihood has the Ledermann bound.
  const std::string why = limit.ledermann ? " by maximum likelihood (Ledermann bound)"
                                          : " (at most one fewer than its assets and than its dates)";
  const std::string rule =
      limit.most == 0 ? sample + " identifies no factor" + why
                      : sample + " identifies at most " + plural(limit.most, "factor", "factors") + why + "; choose " +
                            plural(limit.most, "factor", "factors") + " or fewer";
  return bad_number("factors", std::to_string(factors), rule);
}

}  // namespace factorwatch::engine
