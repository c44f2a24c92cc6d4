// End to end: the `factorwatch fit` command as a user runs it, on published data.
#include <gtest/gtest.h>
#include <unistd.h>

#include <array>
#include <cstdio>
#include <fstream>
#include <nlohmann/json.hpp>
#include <string>
#include <sys/wait.h>

#include "factorwatch/engine/caution.h"
#include "reference_table.h"
#include "storage_fixtures.h"

namespace {

using factorwatch::testing::CommandResult;

// `fit` needs no database; the temporary directory only catches stderr.
CommandResult run(const std::string& arguments) {
  const factorwatch::testing::TempDir dir;
  return factorwatch::testing::run_factorwatch(dir.path(), arguments);
}

const std::string kHarman = std::string(FACTORWATCH_REFERENCE_DIR) + "/harman74_cor.csv";

// Source: R 4.2.2 stats::factanal(factors = 2, covmat = Harman74.cor, rotation = "none")
// run to tight convergence (tests/reference/harman74_factanal_k2.csv and _summary.csv).
// Tolerances: at the command's default settings the uniquenesses are within 1e-6 of that
// optimum (the ML stopping rule's target; R's own start-to-start spread is 3.3e-8); the
// statistic within 1e-6 relative.
TEST(FitCommand, JsonOnHarman74MatchesFactanal) {
  const CommandResult r = run("fit --covariance " + kHarman + " --observations 145 --factors 2 --format json");
  ASSERT_EQ(r.status, 0) << r.out;
  const auto j = nlohmann::json::parse(r.out);
  const auto ref = factorwatch::testing::read_reference("harman74_factanal_k2.csv");
  const auto summary = factorwatch::testing::read_reference("harman74_factanal_summary.csv");
  ASSERT_EQ(j["assets"].size(), ref.rows.size());
  for (std::size_t i = 0; i < ref.rows.size(); ++i) {
    EXPECT_EQ(j["assets"][i], ref.text(i, "variable"));
    EXPECT_NEAR(j["uniqueness"][i].get<double>(), ref.number(i, "uniqueness"), 1e-6);
    EXPECT_EQ(j["loadings"][i].size(), 2u);
  }
  EXPECT_NEAR(j["lr_test"]["statistic"].get<double>(), summary.number(1, "statistic"),
              1e-6 * summary.number(1, "statistic"));
  EXPECT_EQ(j["lr_test"]["dof"].get<double>(), summary.number(1, "dof"));
  EXPECT_TRUE(j["converged"].get<bool>());
  EXPECT_EQ(j["termination"], "converged");
  // The evidence for "converged": the criterion at the returned estimate, within the default.
  EXPECT_LE(j["largest_scaled_gradient"].get<double>(), 1e-8);
  EXPECT_EQ(j["tolerance"].get<double>(), 1e-8);
  EXPECT_EQ(j["iterations"].get<int>(),
            j["em_passes"].get<int>() + j["newton_steps"].get<int>() + j["profile_steps"].get<int>());
  EXPECT_EQ(j["caution"], factorwatch::engine::kCaution);
  EXPECT_GE(j["eigenvalues"].size(), 14u);  // 2k + 10
  EXPECT_GT(j["fit_seconds"].get<double>(), 0.0);
  for (const char* key : {"specific_variance", "communality", "trace", "log_likelihood", "iterations",
                          "excluded", "heywood", "method", "basis", "solver_path"})
    EXPECT_TRUE(j.contains(key)) << key;
}

TEST(FitCommand, TableEndsWithTheCaution) {
  const CommandResult r = run("fit --covariance " + kHarman + " --observations 145 --factors 3 --method pca");
  ASSERT_EQ(r.status, 0);
  std::string last = r.out.substr(0, r.out.find_last_not_of('\n') + 1);
  last = last.substr(last.find_last_of('\n') + 1);
  EXPECT_EQ(last, factorwatch::engine::kCaution);
  EXPECT_NE(r.out.find("PargraphComprehension"), std::string::npos);
}

TEST(FitCommand, BadInputExitsWithTwoAndPrintsNoModel) {
  const std::string path = ::testing::TempDir() + "/factorwatch_bad_returns.csv";
  std::ofstream(path) << "date,asset,return\n2024-01-02,ZQ-0001,0.01\n2024-01-03,ZQ-0001,oops\n";
  EXPECT_EQ(run("fit --returns " + path).status, 2);
  EXPECT_EQ(run("fit --covariance " + kHarman + " --observations 145 --factors 0").status, 2);
  EXPECT_EQ(run("fit --returns " + path + " --covariance " + kHarman).status, 2);
  const CommandResult missing = run("fit --returns /nonexistent/returns.csv");
  EXPECT_EQ(missing.status, 2);
  EXPECT_TRUE(missing.out.empty());
}

}  // namespace
