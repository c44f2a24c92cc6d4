// How many factors a sample can identify, checked before fitting so that asking for too
// many is a stated reason, never an opaque numerical failure.
//
// Every method: a centred window of T dates and N assets has rank at most min(N, T - 1),
// and a factor model must leave each asset a specific part, so k <= min(N, T) - 1
// (common practice; docs/methodology.md, "How many factors a window identifies").
// Maximum likelihood also: the Ledermann (1937) bound on p assets, the largest k with
// ((p - k)^2 - (p + k)) / 2 >= 0, the degrees of freedom of the likelihood-ratio test;
// beyond it the model has more parameters than the covariance matrix has entries.
#pragma once

#include <optional>
#include <string>

#include "factorwatch/engine/failure.h"
#include "factorwatch/engine/fit.h"

namespace factorwatch::engine {

// The largest k >= 0 with ((p - k)^2 - (p + k)) / 2 >= 0 (0 for p < 3).
int ledermann_bound(long long assets);

struct FactorLimit {
  int most = 0;            // the most factors identified (0: none)
  bool ledermann = false;  // the Ledermann bound is what binds (maximum likelihood)
};

// The most factors `method` identifies with `assets` assets and `dates` dates.
FactorLimit factor_limit(Method method, long long assets, long long dates);

// A bad_input Failure for the field "factors" when `factors` exceeds the limit; nullopt
// when it does not. `sample` says what was counted, e.g. "a window of 30 assets and 252
// dates"; the rule reads "<sample> identifies at most 22 factors by maximum likelihood
// (Ledermann bound); choose 22 factors or fewer".
std::optional<Failure> too_many_factors(Method method, int factors, long long assets, long long dates,
                                        const std::string& sample);

// "a window of 30 assets and 252 dates"
std::string window_sample(long long assets, long long dates);

}  // namespace factorwatch::engine
