// A price that falls by a factor above 10^16 from one date to the next: the ratio is still
// above 0, but the simple return rounds to exactly -1 (-100 %), which a returns file may
// not hold. Found by fuzz/fuzz_returns_csv.cpp (its saved input, shortened here).
#include <gtest/gtest.h>

#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/returns_csv.h"

namespace fw = factorwatch::storage;

TEST(ReturnsPricesFall, APriceFallingToUnder1e16OfThePreviousIsRefused) {
  const std::string text = "date,ZQ-0001\n2023-03-01,1.2e96\n2023-03-02,102.0\n";
  for (const auto values : {fw::ValuesInFile::prices_to_simple_returns, fw::ValuesInFile::prices_to_log_returns}) {
    try {
      fw::read_returns_text(text, "fall.csv", {values});
      ADD_FAILURE() << "read a -100 % return from prices above 0";
    } catch (const fw::InputError& e) {
      EXPECT_EQ(e.line(), 3u);
      EXPECT_EQ(e.field(), "ZQ-0001");
      EXPECT_NE(e.problem().find("at or below -100 %"), std::string::npos) << e.what();
    }
  }
  // A real collapse (-99.9 %) is still read.
  const auto file = fw::read_returns_text("date,ZQ-0001\n2023-03-01,100\n2023-03-02,0.1\n", "collapse.csv",
                                          {fw::ValuesInFile::prices_to_simple_returns});
  EXPECT_NEAR(file.panel.values(0, 0), -0.999, 1e-12);
}
