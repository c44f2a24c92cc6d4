// The reason issue 16's reproduction must give (30 assets, 252 dates, 40 factors by
// maximum likelihood), shared by its CLI and HTTP regression tests.
#pragma once

#include <string>

namespace factorwatch::testing {

// The limit: the Ledermann (1937) bound ((2p + 1) - sqrt(8p + 1)) / 2 at p = 30 is
// (61 - 15.52) / 2 = 22.74 -> 22 (worked by hand; the bound itself is tested in
// factor_limit_test.cpp); the dates (252) allow 251.
inline const std::string kFortyFactorsOnThirtyAssets =
    "factors = 40: a window of 30 assets and 252 dates identifies at most 22 factors by maximum likelihood "
    "(Ledermann bound); choose 22 factors or fewer";

}  // namespace factorwatch::testing
