// Factor returns and residual returns end to end, through the built `factorwatch` and its
// daemon: `factor-returns` (the series across windows, and every date of one window) and
// `residuals` in their three formats, and GET .../factor-returns and .../residuals giving
// the same CSV bytes and the same JSON.
//
// What the numbers are checked against:
// - pipeline::window_scores and pipeline::factor_return_series on the same database, opened
//   here (the CLI must show what storage computes, to the last bit);
// - Bartlett's (1937) formula f = (L' Psi^-1 L)^-1 L' Psi^-1 (x - mu), formed here with
//   dense matrices from the served loadings and specific variances (`exposures --format
//   json`), the window's means (storage) and the returns as written to the file;
// - the regression (Thomson 1951) scores against the Bartlett ones through the identity
//   f_reg = (Phi^-1 + M)^-1 M f_bartlett, M = L' Psi^-1 L, which follows from the two
//   published formulas (docs/methodology.md, "Factor returns");
// - residuals against e = x - mu - L f formed here.
//
// Data: planted structure (invented numbers, tests/simulated_model.h) with a late listing
// (excluded from the early windows), a gap on the last as-of date and one date on which
// only two assets have returns (too few to score two factors).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>

#include "csv_text.h"
#include "daemon_fixture.h"
#include "factorwatch/engine/caution.h"
#include "factorwatch/pipeline/factor_returns.h"
#include "factorwatch/pipeline/served_windows.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/windows.h"
#include "served_model.h"
#include "simulated_model.h"
#include "storage_fixtures.h"

namespace {

using namespace factorwatch;
namespace fw = factorwatch::testing;
using nlohmann::json;

constexpr int kDates = 260, kAssets = 30, kFactors = 2, kWindow = 120, kStep = 20;
constexpr int kLateListing = 5, kLastDateGap = 8, kSparseDate = 245;
const std::string kCautionLine = std::string("# caution: ") + engine::kCaution;
const std::string kCautionTable = std::string("Caution: ") + engine::kCaution + "\n";
const std::string kBartlettWords = "factor returns (Bartlett weighted least squares scores of the centred returns)";
const std::string kRegressionWords = "factor returns (regression / Thomson scores";

bool ends_with(const std::string& text, const std::string& end) {
  return text.size() >= end.size() && text.compare(text.size() - end.size(), end.size(), end) == 0;
}

// A JSON number or null (NaN) as a double.
double number(const json& j) { return j.is_null() ? std::numeric_limits<double>::quiet_NaN() : j.get<double>(); }

using fw::ServedModel;
using fw::served_model;

class FactorReturnsSurfaces : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = std::make_unique<fw::TempDir>();
    fw::PlantedModel m = fw::simulate_planted_model(kDates, kAssets, kFactors, 20261203u);
    m.panel.dates = fw::business_dates(kDates);
    const double nan = std::numeric_limits<double>::quiet_NaN();
    for (int t = 0; t < 100; ++t) m.panel.values(t, kLateListing) = nan;  // 20 of the first window's 120 dates
    m.panel.values(kDates - 1, kLastDateGap) = nan;
    // Half the universe missing: still a date of the model (model_calendar.h); with fewer it
    // would be left out of every window (NotScored below has a date scored on too few).
    for (int i = kAssets / 2; i < kAssets; ++i) m.panel.values(kSparseDate, i) = nan;
    panel_ = m.panel;
    fw::write_long_csv(dir_->file("returns.csv"), m.panel);
    auto step = [](const std::string& arguments) {
      if (status_ != 0) return;
      const fw::CommandResult r = fw::run_factorwatch(dir_->path(), arguments);
      status_ = r.status;
      if (r.status != 0) failure_ = arguments + ": " + r.err;
    };
    status_ = 0;
    step("load '" + dir_->file("returns.csv") + "'");
    // Varimax: the served basis differs from the fitted one, so a surface scoring under
    // the fitted loadings would show other numbers.
    step("model set m --method ml --factors 2 --window " + std::to_string(kWindow) + " --step " +
         std::to_string(kStep) + " --rotation varimax");
    step("refresh m");
    if (status_ != 0) return;
    const json windows = json::parse(run("windows m --format json").out);
    for (const auto& w : windows["windows"]) {
      windows_.push_back(w["as_of"]);
      if (!w["usable"].get<bool>()) ++unusable_;
    }
  }
  static void TearDownTestSuite() { dir_.reset(); }
  void SetUp() override {
    ASSERT_EQ(status_, 0) << failure_;
    ASSERT_EQ(windows_.size(), 8u);  // as-of indices 119, 139, ..., 259
    ASSERT_EQ(unusable_, 0);
  }

  static fw::CommandResult run(const std::string& arguments) { return fw::run_factorwatch(dir_->path(), arguments); }
  static json json_of(const std::string& arguments) {
    const auto r = run(arguments);
    EXPECT_EQ(r.status, 0) << arguments << ": " << r.err;
    return r.status == 0 ? json::parse(r.out) : json();
  }
  static long version_id(storage::Database& db) { return storage::find_model(db, "m")->id; }
  // The return of `asset` on `date` as written to the file (NaN for a gap).
  static double file_return(const std::string& asset, const std::string& date) {
    const auto t = std::find(panel_.dates.begin(), panel_.dates.end(), fw::day(date.c_str())) - panel_.dates.begin();
    const auto i = std::find(panel_.assets.begin(), panel_.assets.end(), asset) - panel_.assets.begin();
    return panel_.values(t, i);
  }

  static inline std::unique_ptr<fw::TempDir> dir_;
  static inline int status_ = -1;
  static inline std::string failure_;
  static inline engine::ReturnsPanel panel_;
  static inline std::vector<std::string> windows_;
  static inline int unusable_ = 0;
};

// Every date of a window, as the CLI prints it, is what storage computes on the same
// database: the same dates, assets used, reasons, and bit for bit the same numbers.
TEST_F(FactorReturnsSurfaces, OneWindowJsonEqualsStorageExactly) {
  storage::Database db(dir_->database());
  for (const std::string& as_of : {windows_.front(), windows_[3], windows_.back()}) {
    for (const auto method : {engine::ScoreMethod::bartlett, engine::ScoreMethod::regression}) {
      const json cli =
          json_of("factor-returns m --window " + as_of + " --method " + engine::to_string(method) + " --format json");
      const pipeline::WindowScores stored = pipeline::window_scores(db, version_id(db), fw::day(as_of.c_str()), method, false);
      ASSERT_TRUE(stored.ok()) << stored.failure;
      EXPECT_EQ(cli["caution"], engine::kCaution);
      EXPECT_EQ(cli["as_of"], as_of);
      EXPECT_EQ(cli["first_date"], stored.first_date);
      EXPECT_EQ(cli["method"], engine::to_string(method));
      EXPECT_EQ(cli["description"].get<std::string>().rfind(
                    method == engine::ScoreMethod::bartlett ? kBartlettWords : kRegressionWords, 0),
                0u)
          << cli["description"];
      EXPECT_EQ(cli["modelled_assets"], stored.scores.modelled_assets);
      ASSERT_EQ(cli["dates"].size(), stored.scores.dates.size());
      ASSERT_EQ(cli["dates"].size(), std::size_t(kWindow));
      int unscored = 0;
      for (std::size_t t = 0; t < stored.scores.dates.size(); ++t) {
        const json& d = cli["dates"][t];
        EXPECT_EQ(d["date"], stored.scores.dates[t]);
        EXPECT_EQ(d["assets_used"], stored.scores.assets_used[t]);
        for (int j = 0; j < kFactors; ++j) {
          const double expected = stored.scores.scores(Eigen::Index(t), j);
          if (std::isnan(expected)) EXPECT_TRUE(d["factor_returns"][j].is_null());
          else EXPECT_EQ(d["factor_returns"][j].get<double>(), expected) << as_of << " " << d["date"];
        }
        if (!d["reason"].is_null()) ++unscored;
      }
      EXPECT_EQ(unscored, int(stored.scores.unscored.size()));
      // Every date has at least k + 1 observed assets (NotScored below has one that has not).
      EXPECT_EQ(unscored, 0);
    }
  }
  // A date between windows: the latest window before it, with a note.
  const json between = json_of("factor-returns m --window " + panel_.dates[kDates - 2].iso() + " --format json");
  EXPECT_EQ(between["as_of"], windows_[windows_.size() - 2]);
  EXPECT_NE(between.value("note", std::string()).find("no window ends on " + panel_.dates[kDates - 2].iso()),
            std::string::npos);
}

// Bartlett's scores from the published formula, formed here from the served model and the
// file's returns, on a fully observed date, the date with a gap and the sparse date (15 of
// the 30 assets observed).
// Tolerance 1e-12 on scores of size about 1: the two computations differ in summation
// order and in the solver of the 2 x 2 system, whose condition number is printed (1.3
// measured: the planted loadings are well apart), so rounding stays near 1e-15 (1.3e-15
// measured).
TEST_F(FactorReturnsSurfaces, BartlettScoresFollowTheFormulaOnTheServedModel) {
  storage::Database db(dir_->database());
  const std::string as_of = windows_.back();
  const ServedModel m = served_model(json_of("exposures m --as-of " + as_of + " --format json"));
  const auto window = pipeline::read_served_window(db, version_id(db), fw::day(as_of.c_str()), false);  // served
  ASSERT_TRUE(window);
  const json cli = json_of("factor-returns m --window " + as_of + " --format json");
  const json regression = json_of("factor-returns m --window " + as_of + " --method regression --format json");
  double worst = 0, condition = 0;
  int checked = 0;
  for (std::size_t t = 0; t < cli["dates"].size(); ++t) {
    const std::string date = cli["dates"][t]["date"];
    Eigen::MatrixXd ltp = Eigen::MatrixXd::Zero(kFactors, kFactors);  // L' Psi^-1 L, observed assets
    Eigen::VectorXd ltz = Eigen::VectorXd::Zero(kFactors);            // L' Psi^-1 (x - mu)
    int observed = 0;
    for (const auto& [asset, i] : m.row) {
      const double x = file_return(asset, date);
      if (std::isnan(x)) continue;
      ++observed;
      const auto fit_row = std::find(window->fit.assets.begin(), window->fit.assets.end(), asset) -
                           window->fit.assets.begin();
      ltp += m.loadings.row(i).transpose() * m.loadings.row(i) / m.psi(i);
      ltz += m.loadings.row(i).transpose() * (x - window->fit.mean(fit_row)) / m.psi(i);
    }
    EXPECT_EQ(cli["dates"][t]["assets_used"], observed) << date;
    if (date == panel_.dates[kSparseDate].iso()) {
      EXPECT_EQ(observed, kAssets / 2);
    }
    const Eigen::VectorXd bartlett = ltp.ldlt().solve(ltz);
    const Eigen::VectorXd eigenvalues = Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>(ltp).eigenvalues();
    condition = std::max(condition, eigenvalues.maxCoeff() / eigenvalues.minCoeff());
    Eigen::VectorXd shown(kFactors), shown_regression(kFactors);
    for (int j = 0; j < kFactors; ++j) {
      shown(j) = cli["dates"][t]["factor_returns"][j];
      shown_regression(j) = regression["dates"][t]["factor_returns"][j];
    }
    EXPECT_LT((shown - bartlett).cwiseAbs().maxCoeff(), 1e-12) << date;
    worst = std::max(worst, (shown - bartlett).cwiseAbs().maxCoeff());
    // Regression = (Phi^-1 + M)^-1 M x Bartlett: shrunk towards zero.
    const Eigen::MatrixXd shrink = (Eigen::MatrixXd(m.phi.inverse()) + ltp).ldlt().solve(ltp);
    EXPECT_LT((shown_regression - shrink * shown).cwiseAbs().maxCoeff(), 1e-12) << date;
    EXPECT_LT(shown_regression.norm(), shown.norm()) << date;
    ++checked;
  }
  EXPECT_EQ(checked, kWindow);
  std::printf("[ measured ] max |CLI Bartlett - formula| = %.2e; largest condition number of L' Psi^-1 L %.1f\n",
              worst, condition);
}

// The series: one row per usable window, each equal to that window's own scores of its
// last date, and bit for bit what pipeline::factor_return_series computes.
// Tolerance 1e-12 against the window's own last row: the series reads one date of every
// stored asset and the window its fitted assets, so the sums run in another order.
TEST_F(FactorReturnsSurfaces, SeriesHasOneRowPerWindowEqualToItsLastDate) {
  storage::Database db(dir_->database());
  double worst = 0;
  for (const auto method : {engine::ScoreMethod::bartlett, engine::ScoreMethod::regression}) {
    const std::string name = engine::to_string(method);
    const json series = json_of("factor-returns m --method " + name + " --format json");
    EXPECT_EQ(series["caution"], engine::kCaution);
    EXPECT_EQ(series["method"], name);
    EXPECT_EQ(series["factors"], kFactors);
    EXPECT_TRUE(series["skipped"].empty());
    const pipeline::FactorReturnSeries stored = pipeline::factor_return_series(db, version_id(db), std::nullopt, std::nullopt, method);
    ASSERT_EQ(series["rows"].size(), windows_.size());
    ASSERT_EQ(stored.rows.size(), windows_.size());
    for (std::size_t w = 0; w < windows_.size(); ++w) {
      const json& row = series["rows"][w];
      EXPECT_EQ(row["as_of"], windows_[w]);
      EXPECT_EQ(row["alignment"], stored.rows[w].alignment);
      EXPECT_EQ(row["first_date"], stored.rows[w].window_first_date);
      EXPECT_EQ(row["assets_used"], stored.rows[w].assets_used);
      const json own = json_of("factor-returns m --window " + windows_[w] + " --method " + name + " --format json");
      const json& last = own["dates"].back();
      EXPECT_EQ(last["date"], windows_[w]);
      EXPECT_EQ(row["assets_used"], last["assets_used"]);
      for (int j = 0; j < kFactors; ++j) {
        EXPECT_EQ(number(row["factor_returns"][j]), stored.rows[w].scores(j));
        const double gap = std::abs(number(row["factor_returns"][j]) - number(last["factor_returns"][j]));
        EXPECT_LT(gap, 1e-12) << windows_[w];
        worst = std::max(worst, gap);
      }
    }
    // The late listing is excluded from the first windows (29 modelled), the last date has a gap.
    EXPECT_EQ(series["rows"][0]["assets_used"], kAssets - 1);
    EXPECT_EQ(series["rows"][windows_.size() - 1]["assets_used"], kAssets - 1);
    EXPECT_EQ(series["rows"][windows_.size() - 2]["assets_used"], kAssets);
  }
  std::printf("[ measured ] max |series row - the window's own last date| = %.2e\n", worst);
  // A range keeps the windows inside it.
  const json some = json_of("factor-returns m --from " + windows_[2] + " --to " + windows_[4] + " --format json");
  ASSERT_EQ(some["rows"].size(), 3u);
  EXPECT_EQ(some["rows"][0]["as_of"], windows_[2]);
  EXPECT_EQ(some["from"], windows_[2]);
}

// e = x - mu - L f, formed here from the file's returns, the served loadings (exposures),
// the window's means (storage) and the factor returns the CLI shows. Tolerance 1e-15 on
// residuals of size about 1e-2: the same operations in possibly another order, a few
// units in the last place.
TEST_F(FactorReturnsSurfaces, ResidualsAreReturnMinusMeanMinusLoadingsTimesFactorReturns) {
  storage::Database db(dir_->database());
  double worst = 0;
  for (const std::string& as_of : {windows_[4], windows_.back()}) {
    const ServedModel m = served_model(json_of("exposures m --as-of " + as_of + " --format json"));
    const auto window = pipeline::read_served_window(db, version_id(db), fw::day(as_of.c_str()), false);
    ASSERT_TRUE(window);
    for (const auto method : {engine::ScoreMethod::bartlett, engine::ScoreMethod::regression}) {
      const std::string name = engine::to_string(method);
      const json scores = json_of("factor-returns m --window " + as_of + " --method " + name + " --format json");
      for (const std::string asset : {"P1003", "P1008", "P1005"}) {
        const json r = json_of("residuals m " + asset + " --window " + as_of + " --method " + name + " --format json");
        EXPECT_EQ(r["caution"], engine::kCaution);
        EXPECT_EQ(r["method"], name);
        EXPECT_NE(r["description"].get<std::string>().find(
                      method == engine::ScoreMethod::bartlett ? kBartlettWords : kRegressionWords),
                  std::string::npos);
        const int i = m.row.at(asset);
        const auto fit_row =
            std::find(window->fit.assets.begin(), window->fit.assets.end(), asset) - window->fit.assets.begin();
        const double mu = window->fit.mean(fit_row);
        EXPECT_EQ(r["mean"].get<double>(), mu);
        EXPECT_EQ(r["specific_variance"].get<double>(), m.psi(i));
        for (int j = 0; j < kFactors; ++j) EXPECT_EQ(r["loadings"][j].get<double>(), m.loadings(i, j));
        ASSERT_EQ(r["residuals"].size(), std::size_t(kWindow));
        int missing = 0;
        for (std::size_t t = 0; t < r["residuals"].size(); ++t) {
          const std::string date = r["residuals"][t]["date"];
          ASSERT_EQ(date, scores["dates"][t]["date"]);
          const double x = file_return(asset, date);
          const json& f = scores["dates"][t]["factor_returns"];
          if (std::isnan(x) || f[0].is_null()) {
            EXPECT_TRUE(r["residuals"][t]["residual"].is_null()) << asset << " " << date;
            ++missing;
            continue;
          }
          const double expected = x - mu - (m.loadings(i, 0) * f[0].get<double>() + m.loadings(i, 1) * f[1].get<double>());
          const double got = r["residuals"][t]["residual"];
          EXPECT_NEAR(got, expected, 1e-15) << asset << " " << date;
          worst = std::max(worst, std::abs(got - expected));
        }
        // The last window (dates 140..259): the second half of the assets (P1015 on) has no
        // return on the sparse date, and P1008 a gap on the last date. Window 4 (dates
        // 80..199): P1005 is listed on date 100 (20 gaps, coverage 0.83, so fitted), the
        // others are complete.
        const int index = std::stoi(asset.substr(1)) - 1000;
        const int expected_missing = as_of == windows_.back() ? (asset == "P1008" ? 1 : 0) + (index >= kAssets / 2 ? 1 : 0)
                                                              : (asset == "P1005" ? 20 : 0);
        EXPECT_EQ(missing, expected_missing) << asset << " " << as_of;
      }
    }
  }
  std::printf("[ measured ] max |CLI residual - (x - mu - L f)| = %.2e\n", worst);
}

TEST_F(FactorReturnsSurfaces, CsvIsCautionHeadingAndOneHeaderRow) {
  // The series.
  for (const std::string method : {"bartlett", "regression"}) {
    const auto r = run("factor-returns m --method " + method + " --format csv");
    ASSERT_EQ(r.status, 0) << r.err;
    const auto lines = fw::lines_of(r.out);
    ASSERT_EQ(lines.size(), 3u + windows_.size());
    EXPECT_EQ(lines[0], kCautionLine);
    EXPECT_EQ(lines[1].rfind("# model m version 1, windows from the first to the latest; method " + method, 0), 0u)
        << lines[1];
    EXPECT_NE(lines[1].find(method == "bartlett" ? kBartlettWords : kRegressionWords), std::string::npos) << lines[1];
    EXPECT_EQ(lines[2], "as_of,first_date,alignment,f1,f2,assets_used,reason");
    const json j = json_of("factor-returns m --method " + method + " --format json");
    for (std::size_t w = 0; w < windows_.size(); ++w) {
      const auto f = fw::csv_fields(lines[3 + w]);
      ASSERT_EQ(f.size(), 7u) << lines[3 + w];
      EXPECT_EQ(f[0], windows_[w]);
      // The CSV's numbers read back as the JSON's: exact text both ways.
      EXPECT_EQ(std::stod(f[3]), j["rows"][w]["factor_returns"][0].get<double>());
      EXPECT_EQ(std::stod(f[4]), j["rows"][w]["factor_returns"][1].get<double>());
      EXPECT_EQ(f[5], std::to_string(j["rows"][w]["assets_used"].get<int>()));
      EXPECT_EQ(f[6], "");
    }
  }
  // One window: every date, the sparse one scored on the assets observed.
  const auto w = run("factor-returns m --window " + windows_.back() + " --format csv");
  ASSERT_EQ(w.status, 0) << w.err;
  auto lines = fw::lines_of(w.out);
  ASSERT_EQ(lines.size(), 3u + kWindow);
  EXPECT_EQ(lines[0], kCautionLine);
  EXPECT_EQ(lines[1].rfind("# model m version 1, window ", 0), 0u) << lines[1];
  EXPECT_NE(lines[1].find("method bartlett, " + kBartlettWords), std::string::npos) << lines[1];
  EXPECT_EQ(lines[2], "date,f1,f2,assets_used,reason");
  const auto sparse = fw::csv_fields(lines[3 + kSparseDate - (kDates - kWindow)]);
  ASSERT_EQ(sparse.size(), 5u);
  EXPECT_EQ(sparse[0], panel_.dates[kSparseDate].iso());
  EXPECT_NE(sparse[1], "");
  EXPECT_EQ(sparse[3], std::to_string(kAssets / 2));
  EXPECT_EQ(sparse[4], "");
  // Residuals: the asset's numbers in the heading, then date,residual.
  const auto r = run("residuals m P1003 --method regression --format csv");
  ASSERT_EQ(r.status, 0) << r.err;
  lines = fw::lines_of(r.out);
  ASSERT_EQ(lines.size(), 3u + kWindow);
  EXPECT_EQ(lines[0], kCautionLine);
  const json rj = json_of("residuals m P1003 --method regression --format json");
  EXPECT_NE(lines[1].find("; asset P1003: mean "), std::string::npos) << lines[1];
  EXPECT_NE(lines[1].find("specific variance "), std::string::npos) << lines[1];
  EXPECT_NE(lines[1].find("method regression, "), std::string::npos) << lines[1];
  EXPECT_EQ(lines[2], "date,residual");
  for (std::size_t t = 0; t < std::size_t(kWindow); ++t) {
    const auto f = fw::csv_fields(lines[3 + t]);
    ASSERT_EQ(f.size(), 2u);
    EXPECT_EQ(f[0], rj["residuals"][t]["date"]);
    if (rj["residuals"][t]["residual"].is_null()) EXPECT_EQ(f[1], "");
    else EXPECT_EQ(std::stod(f[1]), rj["residuals"][t]["residual"].get<double>());
  }
  // The heading's mean is the JSON's, exactly.
  const std::string after_mean = lines[1].substr(lines[1].find(": mean ") + 7);
  EXPECT_EQ(std::stod(after_mean.substr(0, after_mean.find(','))), rj["mean"].get<double>());
}

TEST_F(FactorReturnsSurfaces, TablesNameTheMethodAndEndWithTheCaution) {
  const std::vector<std::string> commands = {"factor-returns m", "factor-returns m --method regression",
                                             "factor-returns m --window " + windows_.back(), "residuals m P1003",
                                             "residuals m P1003 --method regression"};
  for (const std::string& arguments : commands) {
    const auto r = run(arguments);
    ASSERT_EQ(r.status, 0) << arguments << ": " << r.err;
    EXPECT_TRUE(ends_with(r.out, kCautionTable)) << arguments;
    const bool regression = arguments.find("regression") != std::string::npos;
    EXPECT_NE(r.out.find(regression ? "method regression" : "method bartlett"), std::string::npos) << r.out;
    EXPECT_NE(r.out.find(regression ? kRegressionWords : kBartlettWords), std::string::npos) << r.out;
  }
}

// A date of a window on which fewer than k + 1 of its assets have a return is shown, not
// scored, with its reason (2 observed assets cannot determine 2 factors and a mean). In a
// universe of four, two is half: the date is in the model's calendar (model_calendar.h).
TEST(FactorReturnsNotScored, ADateWithTooFewAssetsHasEmptyCellsAndItsReason) {
  fw::TempDir dir;
  fw::PlantedModel m = fw::simulate_planted_model(60, 4, 1, 20261205u);
  m.panel.dates = fw::business_dates(60);
  constexpr int kFewDate = 55;
  for (int i = 2; i < 4; ++i) m.panel.values(kFewDate, i) = std::numeric_limits<double>::quiet_NaN();
  fw::write_long_csv(dir.file("returns.csv"), m.panel);
  ASSERT_EQ(fw::run_factorwatch(dir.path(), "load '" + dir.file("returns.csv") + "'").status, 0);
  ASSERT_EQ(fw::run_factorwatch(dir.path(), "model set m --method pca --factors 2 --window 40 --step 20").status, 0);
  ASSERT_EQ(fw::run_factorwatch(dir.path(), "refresh m").status, 0);
  const std::string date = m.panel.dates[kFewDate].iso();
  const auto csv = fw::run_factorwatch(dir.path(), "factor-returns m --format csv");
  ASSERT_EQ(csv.status, 0) << csv.err;
  const json j = json::parse(fw::run_factorwatch(dir.path(), "factor-returns m --window " + m.panel.dates[59].iso() +
                                                                 " --format json").out);
  bool seen = false;
  for (const auto& row : j["dates"]) {
    if (row["date"] != date) continue;
    seen = true;
    EXPECT_EQ(row["assets_used"], 2);
    EXPECT_TRUE(row["factor_returns"][0].is_null());
    EXPECT_NE(row["reason"].get<std::string>().find("fewer than k + 1"), std::string::npos) << row.dump();
  }
  EXPECT_TRUE(seen) << j.dump();
  const auto table = fw::run_factorwatch(dir.path(), "factor-returns m --window " + m.panel.dates[59].iso());
  EXPECT_NE(table.out.find(date + "         -         -       2  not scored: "), std::string::npos) << table.out;
}

TEST_F(FactorReturnsSurfaces, CommandLineFailuresNameTheOptionAndExit) {
  auto r = run("residuals m P1005 --window " + windows_.front());
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("asset 'P1005': not in the window as of " + windows_.front() +
                       ": excluded from the fit: coverage"),
            std::string::npos)
      << r.err;
  r = run("residuals m NOPE");
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("asset 'NOPE': unknown asset (no returns stored)"), std::string::npos) << r.err;
  r = run("residuals nobody P1003");
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("no model named 'nobody'"), std::string::npos) << r.err;
  r = run("factor-returns m --window 2021-02-30");
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("option '--window' = '2021-02-30'"), std::string::npos) << r.err;
  r = run("factor-returns m --window " + panel_.dates[10].iso());  // before the first window
  EXPECT_EQ(r.status, 1);
  EXPECT_NE(r.err.find("no window on or before " + panel_.dates[10].iso()), std::string::npos) << r.err;
  r = run("factor-returns m --method thomson");
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("--method"), std::string::npos) << r.err;
  r = run("factor-returns m --from " + windows_[3] + " --to " + windows_[1]);
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("option '--to'"), std::string::npos) << r.err;
  r = run("factor-returns m --window " + windows_[1] + " --from " + windows_[0]);
  EXPECT_EQ(r.status, 2);
  EXPECT_TRUE(r.out.empty());
}

// The daemon answers what the command line answers, byte for byte for CSV.
TEST_F(FactorReturnsSurfaces, DaemonServesTheSameBytesAsTheCommandLine) {
  fw::DaemonProcess daemon(dir_->path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  struct Case {
    std::string query, cli, filename;
  };
  const std::string last = windows_.back();
  const std::vector<Case> cases = {
      {"/v1/models/m/factor-returns?format=csv", "factor-returns m --format csv", "m-factor-returns-bartlett.csv"},
      {"/v1/models/m/factor-returns?method=regression&from=" + windows_[2] + "&format=csv",
       "factor-returns m --method regression --from " + windows_[2] + " --format csv", "m-factor-returns-regression.csv"},
      {"/v1/models/m/factor-returns?window=" + last + "&format=csv", "factor-returns m --window " + last + " --format csv",
       "m-factor-returns-" + last + "-bartlett.csv"},
      {"/v1/models/m/residuals?asset=P1008&method=regression&format=csv",
       "residuals m P1008 --method regression --format csv", "m-residuals-P1008-" + last + "-regression.csv"},
  };
  for (const Case& c : cases) {
    const auto got = fw::curl(dir_->path(), "", daemon.url(c.query));
    ASSERT_EQ(got.status, 200) << c.query << ": " << got.body;
    const auto cli = run(c.cli);
    ASSERT_EQ(cli.status, 0) << cli.err;
    EXPECT_EQ(got.body, cli.out) << c.query;
    EXPECT_EQ(got.header("factorwatch-caution"), engine::kCaution);
    EXPECT_NE(got.header("content-disposition").find("filename=\"" + c.filename + "\""), std::string::npos)
        << got.header("content-disposition");
  }
  // JSON: the same document (the CLI indents it).
  for (const auto& [query, arguments] : std::vector<std::pair<std::string, std::string>>{
           {"/v1/models/m/factor-returns", "factor-returns m --format json"},
           {"/v1/models/m/factor-returns?window=" + windows_[3], "factor-returns m --window " + windows_[3] + " --format json"},
           {"/v1/models/m/residuals?asset=P1003&window=" + windows_[3],
            "residuals m P1003 --window " + windows_[3] + " --format json"}}) {
    const auto got = fw::curl(dir_->path(), "", daemon.url(query));
    ASSERT_EQ(got.status, 200) << query << ": " << got.body;
    EXPECT_EQ(got.body.rfind("{\"caution\":", 0), 0u);
    EXPECT_EQ(json::parse(got.body), json_of(arguments)) << query;
  }
}

TEST_F(FactorReturnsSurfaces, DaemonProblemsNameTheField) {
  fw::DaemonProcess daemon(dir_->path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  struct Case {
    std::string query;
    int status;
    std::string field, words;
  };
  const std::vector<Case> cases = {
      {"/v1/models/nope/factor-returns", 404, "name", "no model named 'nope'"},
      {"/v1/models/m/factor-returns?method=thomson", 400, "method", "must be bartlett or regression"},
      {"/v1/models/m/factor-returns?from=2021-13-01", 400, "from", "not a date"},
      {"/v1/models/m/factor-returns?window=2021-02-30", 400, "window", "not a date"},
      {"/v1/models/m/factor-returns?window=" + windows_[1] + "&to=" + windows_[2], 400, "window", "leave out"},
      {"/v1/models/m/factor-returns?window=" + panel_.dates[10].iso(), 404, "window", "no window on or before"},
      {"/v1/models/m/residuals", 400, "asset", "name the asset"},
      {"/v1/models/m/residuals?asset=NOPE", 404, "asset", "unknown asset (no returns stored)"},
      {"/v1/models/m/residuals?asset=P1005&window=" + windows_.front(), 404, "asset",
       "excluded from the fit: coverage"},
      {"/v1/models/m/residuals?asset=P1003&method=x", 400, "method", "must be bartlett or regression"},
      {"/v1/models/m/residuals?asset=P1003&window=" + panel_.dates[10].iso(), 404, "window", "no window on or before"},
      {"/v1/models/nope/residuals?asset=P1003", 404, "name", "no model named 'nope'"},
  };
  for (const Case& c : cases) {
    const auto r = fw::curl(dir_->path(), "", daemon.url(c.query));
    EXPECT_EQ(r.status, c.status) << c.query << ": " << r.body;
    EXPECT_EQ(r.header("content-type"), "application/problem+json") << c.query;
    const json problem = json::parse(r.body);
    EXPECT_EQ(problem.value("field", std::string()), c.field) << c.query << ": " << r.body;
    EXPECT_NE(problem["detail"].get<std::string>().find(c.words), std::string::npos) << c.query << ": " << r.body;
  }
}

}  // namespace
