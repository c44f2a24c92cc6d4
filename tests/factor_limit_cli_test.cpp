// End to end, issue 16: a model asking for more factors than its windows identify. The
// reproduction as reported (300 weekdays of 30 assets with 3 planted factors, the model
// k40 with 40 factors by maximum likelihood over windows of 252 dates every 10): before,
// model set accepted it silently, refresh stored 5 windows "numerical_failure after 0
// iterations" with no reason, windows showed no reason and exposures said "no usable fit
// (numerical_failure)". Now every surface says why, and an explicit universe that can
// never identify the factors is refused when the model is defined.
#include <gtest/gtest.h>

#include <cstdio>
#include <nlohmann/json.hpp>
#include <string>

#include "factor_limit_expected.h"
#include "simulated_model.h"
#include "storage_fixtures.h"

namespace {

namespace fw = factorwatch::testing;
using fw::run_factorwatch;

const std::string& kWindowReason = fw::kFortyFactorsOnThirtyAssets;

// r.csv as in the report: a wide file, a date column and assets A00..A29, six decimals.
void write_reproduction(const std::string& path) {
  auto m = fw::simulate_planted_model(300, 30, 3, 20261216u);
  const auto dates = fw::business_dates(300);
  std::FILE* f = std::fopen(path.c_str(), "w");
  ASSERT_NE(f, nullptr);
  std::fprintf(f, "date");
  for (int i = 0; i < 30; ++i) std::fprintf(f, ",A%02d", i);
  std::fprintf(f, "\n");
  for (int t = 0; t < 300; ++t) {
    std::fprintf(f, "%s", dates[static_cast<std::size_t>(t)].iso().c_str());
    for (int i = 0; i < 30; ++i) std::fprintf(f, ",%.6f", m.panel.values(t, i));
    std::fprintf(f, "\n");
  }
  std::fclose(f);
}

TEST(TooManyFactors, TheReportedReproductionSaysWhyOnEverySurface) {
  fw::TempDir dir;
  write_reproduction(dir.file("r.csv"));
  ASSERT_EQ(run_factorwatch(dir.path(), "load " + dir.file("r.csv")).status, 0);

  // Every stored asset: the count may grow, so model set warns and stores the model.
  auto r = run_factorwatch(dir.path(), "model set k40 --factors 40 --window 252 --step 10");
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("warning: factors = 40: a window of the 30 stored assets and 252 dates identifies at most 22 "
                       "factors by maximum likelihood (Ledermann bound); choose 22 factors or fewer"),
            std::string::npos)
      << r.out;

  const auto refreshed = run_factorwatch(dir.path(), "refresh k40");
  EXPECT_EQ(refreshed.status, 1) << refreshed.out << refreshed.err;

  // The grid's dates are the refresh's business (refresh.h); read them, not assumed here.
  r = run_factorwatch(dir.path(), "windows k40 --format json");
  ASSERT_EQ(r.status, 0) << r.err;
  const auto j = nlohmann::json::parse(r.out);
  ASSERT_EQ(j["windows"].size(), 5u);
  for (const auto& w : j["windows"]) {
    EXPECT_EQ(w["termination"], "not_identified");
    EXPECT_EQ(w["usable"], false);
    EXPECT_EQ(w.value("reason", std::string("(absent)")), kWindowReason);
  }
  const std::string first_as_of = j["windows"][0]["as_of"], last_as_of = j["windows"][4]["as_of"],
                    last_from = j["windows"][4]["first_date"];

  EXPECT_NE(refreshed.out.find("5 windows fitted"), std::string::npos) << refreshed.out;
  EXPECT_NE(refreshed.out.find("5 unusable: " + kWindowReason + "\n"), std::string::npos) << refreshed.out;
  EXPECT_NE(refreshed.out.find("latest window " + last_from + " .. " + last_as_of + ": no usable fit (not_identified: " +
                               kWindowReason + ")"),
            std::string::npos)
      << refreshed.out;

  r = run_factorwatch(dir.path(), "windows k40");
  EXPECT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("not_identified"), std::string::npos) << r.out;
  EXPECT_EQ(r.out.find("numerical_failure"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("not usable (5 windows, " + first_as_of + " .. " + last_as_of + "): " + kWindowReason), std::string::npos)
      << r.out;

  r = run_factorwatch(dir.path(), "windows k40 --format csv");
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find(",alignment_residual,reason\n"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("," + kWindowReason + "\n"), std::string::npos) << r.out;  // no comma in it: unquoted

  r = run_factorwatch(dir.path(), "exposures k40");
  EXPECT_EQ(r.status, 1);
  EXPECT_NE(r.err.find("the window as of " + last_as_of + " has no usable fit (not_identified: " + kWindowReason +
                       "), and no window before it has one"),
            std::string::npos)
      << r.err;

  // At the limit the same windows fit (a few iterations show it: full fits at zero degrees
  // of freedom take minutes, and more under the sanitizers).
  ASSERT_EQ(run_factorwatch(dir.path(), "model set k22 --factors 22 --window 252 --step 10 --max-iterations 3").status, 0);
  r = run_factorwatch(dir.path(), "refresh k22");
  EXPECT_EQ(r.out.find("not_identified"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find(", 0 unusable\n"), std::string::npos) << r.out;
}

// An explicit universe bounds every window's assets: a k it can never identify is refused
// when the model is defined, naming the option, and nothing is stored.
TEST(TooManyFactors, AnExplicitUniverseThatCannotIdentifyTheFactorsIsRefused) {
  fw::TempDir dir;
  std::string names;
  for (int i = 0; i < 30; ++i) names += "A" + std::to_string(10 + i) + "\n";
  fw::write_text(dir.file("universe.txt"), names);
  auto r = run_factorwatch(dir.path(), "model set u40 --factors 40 --window 252 --universe " + dir.file("universe.txt"));
  EXPECT_EQ(r.status, 2) << r.out;
  EXPECT_NE(r.err.find("option '--factors' = 40: a universe of 30 assets with windows of 252 dates identifies at most "
                       "22 factors by maximum likelihood (Ledermann bound); choose 22 factors or fewer"),
            std::string::npos)
      << r.err;
  EXPECT_NE(r.err.find("Nothing was changed."), std::string::npos) << r.err;
  EXPECT_EQ(run_factorwatch(dir.path(), "model list").out.find("u40"), std::string::npos);
  // Principal components on the same universe: the assets' rule, 29.
  r = run_factorwatch(dir.path(), "model set u40 --method pca --factors 30 --window 252 --universe " +
                                      dir.file("universe.txt"));
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("a universe of 30 assets with windows of 252 dates identifies at most 29 factors (at most one "
                       "fewer than its assets and than its dates); choose 29 factors or fewer"),
            std::string::npos)
      << r.err;
  r = run_factorwatch(dir.path(), "model set u40 --factors 22 --window 252 --universe " + dir.file("universe.txt"));
  EXPECT_EQ(r.status, 0) << r.err;
  EXPECT_EQ(r.out.find("warning"), std::string::npos) << r.out;
}

}  // namespace
