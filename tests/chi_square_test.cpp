// Upper-tail chi-square probabilities against R and scipy.
// Source: tests/reference/chi_square_sf.csv — R 4.2.2 stats::pchisq(x, df,
// lower.tail = FALSE) and scipy 1.10.1 scipy.stats.chi2.sf(x, df), which agree
// with each other to 9.3e-14 relative.
#include <gtest/gtest.h>

#include <cmath>

#include "chi_square.h"
#include "reference_table.h"

namespace {

using factorwatch::engine::detail::chi_square_upper_tail;

TEST(ChiSquare, UpperTailMatchesRAndScipy) {
  const auto ref = factorwatch::testing::read_reference("chi_square_sf.csv");
  ASSERT_GT(ref.rows.size(), 40u);
  for (std::size_t i = 0; i < ref.rows.size(); ++i) {
    const double df = ref.number(i, "df"), x = ref.number(i, "x");
    const double expected = ref.number(i, "r_pchisq_upper");
    const double got = chi_square_upper_tail(x, df);
    // 1e-10 relative: both libraries agree to 1e-13; our series and continued
    // fraction stop at 1e-16 per term, the rest is lgamma's rounding.
    if (expected == 0) {
      EXPECT_LT(got, 1e-300) << "df " << df << " x " << x;
    } else {
      EXPECT_NEAR(got, expected, 1e-10 * expected) << "df " << df << " x " << x;
    }
  }
}

TEST(ChiSquare, EdgeValues) {
  EXPECT_EQ(chi_square_upper_tail(0.0, 3.0), 1.0);
  EXPECT_EQ(chi_square_upper_tail(INFINITY, 3.0), 0.0);
  EXPECT_TRUE(std::isnan(chi_square_upper_tail(1.0, 0.0)));
  // df = 2: P(X > x) = exp(-x/2) exactly (the exponential law; common knowledge of the chi-square family).
  EXPECT_NEAR(chi_square_upper_tail(7.0, 2.0), std::exp(-3.5), 1e-15);
}

}  // namespace
