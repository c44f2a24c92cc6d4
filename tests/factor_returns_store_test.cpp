// Factor returns and residual returns from stored windows (pipeline/factor_returns.h): the
// stored path equals the engine (engine/factor_scores.h) applied to the returns as written
// to the file, under each window's served (rotated and aligned) factors; the series across
// windows repeats each window's own score of its as-of date; failures are values.
// Data: a planted factor model (invented numbers, tests/simulated_model.h) with a late
// listing and scattered gaps.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <memory>

#include "factorwatch/engine/factor_scores.h"
#include "factorwatch/pipeline/factor_returns.h"
#include "factorwatch/pipeline/refresh.h"
#include "factorwatch/pipeline/served_windows.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/windows.h"
#include "simulated_model.h"
#include "storage_fixtures.h"
#include "stored_returns.h"

namespace {

using namespace factorwatch;
namespace fw = factorwatch::testing;

constexpr int kT = 160, kN = 30, kK = 3, kWindow = 100, kStep = 10;
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

engine::ReturnsPanel planted() {
  engine::ReturnsPanel p = fw::simulate_planted_model(kT, kN, kK, 23).panel;
  p.dates = fw::business_dates(kT);
  for (int t = 0; t < 70; ++t) p.values(t, 5) = kNaN;  // listed late: excluded from the first windows
  p.values(120, 7) = kNaN;
  p.values(159, 8) = kNaN;  // a gap on the last as-of date
  for (int i = 10; i < 14; ++i) p.values(130, i) = kNaN;
  return p;
}

// A database with the planted returns and a refreshed model (promax: oblique served
// factors, so the served basis differs from the fitted one and Phi is not the identity).
struct Store {
  fw::TempDir dir;
  engine::ReturnsPanel panel = planted();
  std::unique_ptr<storage::Database> db;
  long version = 0;

  Store() {
    fw::write_long_csv(dir.file("r.csv"), panel);
    db = std::make_unique<storage::Database>(dir.database());
    fw::load_returns(*db, dir.file("r.csv"));
    storage::ModelConfig c;
    c.fit.method = engine::Method::max_likelihood;
    c.fit.factors = kK;
    c.window = kWindow;
    c.step = kStep;
    c.rotation.method = engine::RotationMethod::promax;
    storage::set_model(*db, "m", c);
    pipeline::refresh_model(*db, "m");
    version = storage::find_model(*db, "m")->id;
  }

  // The file's returns on the window's dates, every column (the engine ignores the ones
  // the fit lacks).
  engine::ReturnsPanel slice(engine::Date first, engine::Date last) const {
    const auto begin = std::find(panel.dates.begin(), panel.dates.end(), first) - panel.dates.begin();
    const auto end = std::find(panel.dates.begin(), panel.dates.end(), last) - panel.dates.begin() + 1;
    engine::ReturnsPanel p;
    p.dates.assign(panel.dates.begin() + begin, panel.dates.begin() + end);
    p.assets = panel.assets;
    p.values = panel.values.middleRows(begin, end - begin);
    return p;
  }
};

// Tolerance 1e-12 on scores of size about 1 to 3: the stored panel holds the fitted assets
// in id order and the file's slice every asset in file order, so sums run in another order
// (the returns themselves round-trip exactly through %.17g and the database).
constexpr double kScoreTolerance = 1e-12;

TEST(FactorReturnsStore, WindowScoresEqualTheEngineOnTheFileUnderServedFactors) {
  Store s;
  const auto windows = storage::list_windows(*s.db, s.version);
  ASSERT_EQ(windows.size(), 7u);  // as-of indices 99, 109, ..., 159
  double worst = 0;
  for (const auto& summary : windows) {
    ASSERT_TRUE(summary.usable) << summary.as_of;
    const auto window = pipeline::read_served_window(*s.db, s.version, summary.as_of, false);  // served
    ASSERT_TRUE(window);
    const engine::ReturnsPanel file = s.slice(window->first_date, window->as_of);
    for (auto method : {engine::ScoreMethod::bartlett, engine::ScoreMethod::regression}) {
      const pipeline::WindowScores stored = pipeline::window_scores(*s.db, s.version, summary.as_of, method);
      ASSERT_TRUE(stored.ok()) << stored.failure;
      EXPECT_EQ(stored.as_of, window->as_of);
      EXPECT_EQ(stored.first_date, window->first_date);
      const engine::FactorScores direct = engine::factor_scores(file, window->fit, method);
      ASSERT_EQ(stored.scores.dates, direct.dates);
      EXPECT_EQ(stored.scores.assets_used, direct.assets_used);
      EXPECT_EQ(stored.scores.modelled_assets, Eigen::Index(window->fit.assets.size()));
      ASSERT_EQ(stored.scores.scores.rows(), kWindow);
      EXPECT_LT((stored.scores.scores - direct.scores).cwiseAbs().maxCoeff(), kScoreTolerance)
          << summary.as_of << " " << engine::to_string(method);
      worst = std::max(worst, (stored.scores.scores - direct.scores).cwiseAbs().maxCoeff());
      // The served basis matters: the fitted (unrotated) factors give other scores.
      const auto fitted = storage::read_window(*s.db, s.version, summary.as_of, false);
      const engine::FactorScores unrotated = engine::factor_scores(file, fitted->fit, method);
      EXPECT_GT((unrotated.scores - direct.scores).cwiseAbs().maxCoeff(), 1e-3);
    }
  }
  std::printf("[ measured ] max |stored - engine on the file| = %.2e\n", worst);
  // The window with the gaps on date 130: 4 fewer assets used that date.
  const pipeline::WindowScores last = pipeline::window_scores(*s.db, s.version, std::nullopt, engine::ScoreMethod::bartlett);
  ASSERT_TRUE(last.ok());
  EXPECT_EQ(last.as_of, s.panel.dates[159]);
  const auto at130 =
      std::find(last.scores.dates.begin(), last.scores.dates.end(), s.panel.dates[130]) - last.scores.dates.begin();
  EXPECT_EQ(last.scores.assets_used[std::size_t(at130)], last.scores.modelled_assets - 4);
}

TEST(FactorReturnsStore, SeriesHasOneRowPerWindowWithThatWindowsScoreOfItsAsOfDate) {
  Store s;
  const auto windows = storage::list_windows(*s.db, s.version);
  double worst = 0;
  for (auto method : {engine::ScoreMethod::bartlett, engine::ScoreMethod::regression}) {
    const pipeline::FactorReturnSeries series = pipeline::factor_return_series(*s.db, s.version, std::nullopt, std::nullopt, method);
    EXPECT_EQ(series.method, method);
    EXPECT_TRUE(series.skipped.empty());
    ASSERT_EQ(series.rows.size(), windows.size());
    for (std::size_t w = 0; w < windows.size(); ++w) {
      const pipeline::FactorReturnRow& row = series.rows[w];
      EXPECT_EQ(row.as_of, windows[w].as_of);
      EXPECT_EQ(row.window_first_date, windows[w].first_date);
      EXPECT_EQ(row.alignment, windows[w].alignment);
      // The served factors are aligned ones (the first window is the chain's start).
      EXPECT_EQ(row.alignment, w == 0 ? "no reference" : "aligned");
      EXPECT_TRUE(row.unscored_reason.empty());
      const pipeline::WindowScores own = pipeline::window_scores(*s.db, s.version, row.as_of, method);
      ASSERT_TRUE(own.ok());
      ASSERT_EQ(own.scores.dates.back(), row.as_of);
      EXPECT_EQ(row.assets_used, own.scores.assets_used.back());
      ASSERT_EQ(row.scores.size(), kK);
      EXPECT_LT((row.scores.transpose() - own.scores.scores.bottomRows(1)).cwiseAbs().maxCoeff(), kScoreTolerance)
          << row.as_of;
      worst = std::max(worst, (row.scores.transpose() - own.scores.scores.bottomRows(1)).cwiseAbs().maxCoeff());
    }
    // The last as-of date has a gap in asset 8.
    EXPECT_EQ(series.rows.back().assets_used,
              pipeline::window_scores(*s.db, s.version, std::nullopt, method).scores.modelled_assets - 1);
  }
  std::printf("[ measured ] max |series row - window's own last row| = %.2e\n", worst);
  // A date range keeps the windows inside it.
  const auto some = pipeline::factor_return_series(*s.db, s.version, windows[2].as_of, windows[4].as_of,
                                                  engine::ScoreMethod::bartlett);
  ASSERT_EQ(some.rows.size(), 3u);
  EXPECT_EQ(some.rows.front().as_of, windows[2].as_of);
  EXPECT_EQ(some.rows.back().as_of, windows[4].as_of);
  EXPECT_TRUE(
      pipeline::factor_return_series(*s.db, s.version, factorwatch::testing::day("2030-01-01"), std::nullopt,
                                     engine::ScoreMethod::bartlett)
          .rows.empty());
  EXPECT_FALSE(engine::Date::from_iso("2021-13-01"));  // not a date: the surfaces refuse it (read_date)
}

// e = (x - mu) - l' f from the file's returns, the served fit and the window's scores.
// Tolerance 1e-14 on residuals of size about 1e-2 (the scores agree to 1e-12 and the
// loadings are about 1e-2).
TEST(FactorReturnsStore, ResidualsOfAnAssetAreReturnMinusMeanMinusLoadingsTimesScores) {
  Store s;
  const engine::Date as_of = s.panel.dates[129];  // the window of dates 30..129
  const auto window = pipeline::read_served_window(*s.db, s.version, as_of, false);
  ASSERT_TRUE(window);
  const engine::ReturnsPanel file = s.slice(window->first_date, window->as_of);
  double worst = 0;
  for (auto method : {engine::ScoreMethod::bartlett, engine::ScoreMethod::regression}) {
    const engine::FactorScores scores = engine::factor_scores(file, window->fit, method);
    for (const std::string asset : {"P1007", "P1012", "P1000"}) {
      const pipeline::AssetResiduals r = pipeline::asset_residuals(*s.db, s.version, as_of, asset, method);
      ASSERT_TRUE(r.ok()) << r.failure;
      EXPECT_EQ(r.as_of, window->as_of);
      EXPECT_EQ(r.method, method);
      const auto i =
          std::find(window->fit.assets.begin(), window->fit.assets.end(), asset) - window->fit.assets.begin();
      const auto c = std::find(file.assets.begin(), file.assets.end(), asset) - file.assets.begin();
      EXPECT_EQ(r.mean, window->fit.mean[i]);
      EXPECT_EQ(r.specific_variance, window->fit.specific_variance[i]);
      EXPECT_TRUE(r.loadings == Eigen::VectorXd(window->fit.loadings.row(i).transpose()));
      ASSERT_EQ(r.dates, file.dates);
      int gaps = 0;
      for (Eigen::Index t = 0; t < file.periods(); ++t) {
        const double x = file.values(t, c);
        if (std::isnan(x)) {
          ++gaps;
          EXPECT_TRUE(std::isnan(r.residuals[t]));
          continue;
        }
        const double expected = x - window->fit.mean[i] - window->fit.loadings.row(i).dot(scores.scores.row(t));
        EXPECT_NEAR(r.residuals[t], expected, 1e-14) << asset << " " << file.dates[std::size_t(t)];
        worst = std::max(worst, std::abs(r.residuals[t] - expected));
      }
      EXPECT_EQ(gaps, asset == "P1007" ? 1 : 0);  // asset 7's gap on index 120 lies in this window
    }
  }
  std::printf("[ measured ] max |stored residual - (x - mu - l'f)| = %.2e\n", worst);
}

TEST(FactorReturnsStore, FailuresAreValues) {
  Store s;
  const auto windows = storage::list_windows(*s.db, s.version);
  // Asset 5 listed on index 70: 30 of the first window's 100 dates, below the 0.8 coverage.
  const pipeline::AssetResiduals excluded =
      pipeline::asset_residuals(*s.db, s.version, windows.front().as_of, "P1005", engine::ScoreMethod::bartlett);
  EXPECT_FALSE(excluded.ok());
  EXPECT_NE(excluded.failure.find("coverage"), std::string::npos) << excluded.failure;
  const pipeline::AssetResiduals unknown =
      pipeline::asset_residuals(*s.db, s.version, windows.front().as_of, "NOPE", engine::ScoreMethod::bartlett);
  EXPECT_FALSE(unknown.ok());
  EXPECT_NE(unknown.failure.find("no returns in the window"), std::string::npos) << unknown.failure;
  EXPECT_TRUE(unknown.residuals.size() == 0);
  // Before the first window there is none.
  const pipeline::WindowScores early =
      pipeline::window_scores(*s.db, s.version, s.panel.dates[10], engine::ScoreMethod::bartlett);
  EXPECT_FALSE(early.ok());
  EXPECT_NE(early.failure.find("no window"), std::string::npos) << early.failure;
  const pipeline::AssetResiduals none =
      pipeline::asset_residuals(*s.db, s.version, s.panel.dates[10], "P1000", engine::ScoreMethod::bartlett);
  EXPECT_FALSE(none.ok());
  // A malformed date cannot get this far: engine::Date holds real days only.
  EXPECT_FALSE(engine::Date::from_iso("2021-02-30"));
}

}  // namespace
