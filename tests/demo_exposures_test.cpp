// Exposures stored by a refresh of the demo universe recover its planted structure
// (invented data; demo-universe/README.md): before the planted change the stored
// loadings span the loadings planted before it, after the change those planted after.
#include <gtest/gtest.h>

#include <unordered_map>

#include "factorwatch/pipeline/refresh.h"
#include "factorwatch/pipeline/served_windows.h"
#include "factorwatch/storage/ingest.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/windows.h"
#include "generator.h"
#include "linear_algebra_checks.h"
#include "storage_fixtures.h"

namespace {

using namespace factorwatch;
using factorwatch::testing::TempDir;

Eigen::MatrixXd planted_rows(const demo::DemoUniverse& u, const Eigen::MatrixXd& planted,
                             const std::vector<std::string>& assets) {
  std::unordered_map<std::string, Eigen::Index> row;
  for (std::size_t i = 0; i < u.assets.size(); ++i) row[u.assets[i]] = static_cast<Eigen::Index>(i);
  Eigen::MatrixXd out(static_cast<Eigen::Index>(assets.size()), planted.cols());
  for (std::size_t i = 0; i < assets.size(); ++i) out.row(static_cast<Eigen::Index>(i)) = planted.row(row.at(assets[i]));
  return out;
}

// Tolerance 0.46: the spiked-model prediction for the demo's weakest factor at T = 504
// is about 0.36 (Paul 2007, Theorem 4; derived in demo_recovery_test.cpp), plus the 0.1
// margin used there for gaps, listings and unequal specific variances.
TEST(DemoExposures, StoredWindowsRecoverThePlantedLoadingsOnEachSideOfTheChange) {
  const demo::DemoUniverse u = demo::generate_demo_universe({});
  engine::ReturnsPanel panel;
  panel.dates = u.dates;
  panel.assets = u.assets;
  panel.values = u.values;
  TempDir dir;
  storage::Database db(dir.database());
  storage::IngestSource source;
  source.path = "demo universe (generated)";
  source.layout = "wide";
  storage::store_returns(db, panel, source);

  storage::ModelConfig config;
  config.fit.factors = static_cast<int>(u.loadings_after.cols());
  config.window = 504;
  config.step = 97;                // grid as-of indices 503, 600, ..., 1473
  config.first_as_of = u.dates[600];
  storage::set_model(db, "demo", config);
  const auto summary = pipeline::refresh_model(db, "demo");
  EXPECT_EQ(summary.fitted, 10u);
  EXPECT_EQ(summary.unusable, 0u);
  const long id = storage::find_model(db, "demo")->id;

  ASSERT_LT(600, u.change_index);
  const auto before = pipeline::read_served_window(db, id, u.dates[600], false);
  ASSERT_TRUE(before);
  const double before_sine = factorwatch::testing::largest_subspace_sine(
      before->fit.loadings, planted_rows(u, u.loadings_before, before->fit.assets));
  EXPECT_LT(before_sine, 0.46);

  ASSERT_GE(1473 - 503, u.change_index);  // the window starts after the change
  const auto after = pipeline::read_served_window(db, id, u.dates[1473], false);
  ASSERT_TRUE(after);
  EXPECT_GT(after->fit.assets.size(), 500u);
  const double after_sine =
      factorwatch::testing::largest_subspace_sine(after->fit.loadings, planted_rows(u, u.loadings_after, after->fit.assets));
  const double stale_sine =
      factorwatch::testing::largest_subspace_sine(after->fit.loadings, planted_rows(u, u.loadings_before, after->fit.assets));
  EXPECT_LT(after_sine, 0.46);
  EXPECT_GT(stale_sine, after_sine + 0.25);  // the change is visible in the stored exposures

  // Communality + specific variance is each asset's modelled variance, and the planted
  // specific variances are recovered on average within 10% (500+ assets, T = 504).
  double ratio = 0;
  std::unordered_map<std::string, std::size_t> index;
  for (std::size_t i = 0; i < u.assets.size(); ++i) index[u.assets[i]] = i;
  for (std::size_t i = 0; i < after->fit.assets.size(); ++i)
    ratio += after->fit.specific_variance(static_cast<Eigen::Index>(i)) /
             u.specific_variance(static_cast<Eigen::Index>(index.at(after->fit.assets[i])));
  EXPECT_NEAR(ratio / static_cast<double>(after->fit.assets.size()), 1.0, 0.1);
}

}  // namespace
