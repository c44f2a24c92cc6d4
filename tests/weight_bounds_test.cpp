// Absurd weights (issue 13: 1e308 was accepted and `risk` answered 200 with every figure
// null). Holdings files refuse |w| > kLargestWeight (1e15) naming file, line and field;
// weights sent over HTTP follow the same bound; and a book whose figures still overflow
// (weights stored by an older version) is refused naming it: exit 2 from the command,
// 422 from the daemon, never figures shown as nulls.
//
// Data: planted structure (invented numbers, tests/simulated_model.h); portfolios invented.
#include <gtest/gtest.h>

#include <SQLiteCpp/SQLiteCpp.h>

#include <memory>
#include <nlohmann/json.hpp>

#include "daemon_fixture.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/portfolios.h"
#include "simulated_model.h"
#include "storage_fixtures.h"

namespace {

namespace fw = factorwatch::storage;
namespace fwt = factorwatch::testing;
using nlohmann::json;

fw::PortfolioFileOptions book() { return {"book", factorwatch::testing::day("2024-01-31"), ""}; }

void expect_refused(const std::string& text, std::size_t line, const std::string& field, const std::string& words) {
  try {
    fw::parse_portfolio_text(text, "w", book());
    ADD_FAILURE() << "accepted: " << text;
  } catch (const fw::InputError& e) {
    EXPECT_EQ(e.line(), line) << e.what();
    EXPECT_EQ(e.field(), field) << e.what();
    EXPECT_NE(std::string(e.what()).find(words), std::string::npos) << e.what();
  }
}

TEST(WeightBounds, HoldingsFilesRefuseWeightsBeyondTheBound) {
  const std::string beyond = "is beyond +-1e15, the largest weight accepted";
  expect_refused("asset,weight\nZQ-1,0.5\nZQ-2,1e308\n", 3, "weight", "the weight '1e308' " + beyond);
  expect_refused("asset,weight\nZQ-1,-1.0000001e15\n", 2, "weight", beyond);
  expect_refused("{\"weights\": {\"ZQ-1\": 0.5,\n\"ZQ-2\": 1e308}}", 2, "weight",
                 "asset 'ZQ-2': the weight '1e308' " + beyond);
  expect_refused("{\"holdings\": [{\"asset\": \"ZQ-1\",\n\"weight\": -2e15}]}", 2, "weight", beyond);
}

TEST(WeightBounds, WeightsUpToTheBoundAreKeptExactly) {
  // Amounts of money are weights too (docs/api.md): 1e15 itself is accepted.
  const fw::Portfolio p = fw::parse_portfolio_text("asset,weight\nZQ-1,1e15\nZQ-2,-1e15\nZQ-3,2.5e9\n", "w", book());
  ASSERT_EQ(p.holdings.size(), 3u);
  EXPECT_EQ(p.holdings[0].weight, 1e15);
  EXPECT_EQ(p.holdings[1].weight, -1e15);
  EXPECT_EQ(p.holdings[2].weight, 2.5e9);
  EXPECT_EQ(fw::weight_problem(1e15), "");
  EXPECT_NE(fw::weight_problem(std::nextafter(1e15, 2e15)), "");
}

TEST(WeightBounds, StoringRefusesThemToo) {
  // save_portfolio checks again (a Portfolio may be built in code).
  fwt::TempDir dir;
  fw::Database db(dir.database());
  fw::Portfolio p = fw::parse_portfolio_text("asset,weight\nZQ-1,1\n", "w", book());
  p.holdings[0].weight = 1e308;
  EXPECT_THROW(fw::save_portfolio(db, p), std::invalid_argument);
  EXPECT_TRUE(fw::list_portfolios(db).empty());
}

// A fitted model to measure against, built once: the real command, end to end.
class WeightBoundsRisk : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = std::make_unique<fwt::TempDir>();
    fwt::PlantedModel m = fwt::simulate_planted_model(200, 20, 2, 20261204u);
    m.panel.dates = fwt::business_dates(200);
    fwt::write_long_csv(dir_->file("returns.csv"), m.panel);
    asset_ = m.panel.assets[0];
    fwt::write_text(dir_->file("ok.csv"), "asset,weight\n" + asset_ + ",0.5\n" + m.panel.assets[1] + ",0.5\n");
    fwt::write_text(dir_->file("huge.csv"), "asset,weight\n" + asset_ + ",0.5\n" + m.panel.assets[1] + ",1e308\n");
    for (const std::string& step : {"load '" + dir_->file("returns.csv") + "'",
                                    std::string("model set m --method pca --factors 2 --window 120 --step 80"),
                                    std::string("refresh m"), "portfolio set ok '" + dir_->file("ok.csv") + "'",
                                    "portfolio set old '" + dir_->file("ok.csv") + "'"}) {
      const auto r = fwt::run_factorwatch(dir_->path(), step);
      if (r.status != 0) {
        failure_ = step + ": " + r.err;
        return;
      }
    }
    // An older version stored any finite weight: 1e308, written straight into the table.
    fw::Database db(dir_->database());
    SQLite::Statement set(db.sql(),
                          "UPDATE holdings SET weight = 1e308 WHERE position = 1 AND set_id IN (SELECT s.id FROM "
                          "holding_sets s JOIN portfolios p ON p.id = s.portfolio_id WHERE p.name = 'old')");
    if (set.exec() != 1) failure_ = "could not plant the old weight";
  }
  static void TearDownTestSuite() { dir_.reset(); }
  void SetUp() override { ASSERT_TRUE(failure_.empty()) << failure_; }
  static fwt::CommandResult run(const std::string& arguments) { return fwt::run_factorwatch(dir_->path(), arguments); }

  static inline std::unique_ptr<fwt::TempDir> dir_;
  static inline std::string failure_;
  static inline std::string asset_;
};

TEST_F(WeightBoundsRisk, CommandRefusesHugeWeightsFromAFile) {
  const auto r = run("risk m --weights '" + dir_->file("huge.csv") + "' --format json");
  EXPECT_EQ(r.status, 2) << r.out;
  EXPECT_NE(r.err.find("huge.csv:3: field 'weight': the weight '1e308' is beyond +-1e15"), std::string::npos) << r.err;
  const auto trade = run("risk m ok --trade '" + dir_->file("huge.csv") + "'");
  EXPECT_EQ(trade.status, 2) << trade.out;
}

TEST_F(WeightBoundsRisk, StoredHugeWeightsAreRefusedNotShownAsNulls) {
  ASSERT_EQ(run("risk m ok --format json").status, 0);  // the same book with sane weights
  for (const std::string format : {"json", "csv", "table"}) {
    const auto r = run("risk m old --format " + format);
    EXPECT_EQ(r.status, 2) << format << ": " << r.out;
    EXPECT_NE(r.err.find("PORTFOLIO: the risk figures of the portfolio book 'old' overflow"), std::string::npos)
        << r.err;
    EXPECT_EQ(r.out, "") << format;
  }
}

TEST_F(WeightBoundsRisk, DaemonAnswers4xxNamingTheWeights) {
  fwt::DaemonProcess daemon(dir_->path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  // Sent weights: refused on reading, like a file's.
  const std::string body = "{\"weights\": {\"" + asset_ + "\": 1e308}}";
  const auto posted = fwt::curl(dir_->path(), "-X POST -H 'Content-Type: application/json' --data '" + body + "'",
                                daemon.url("/v1/models/m/risk"));
  EXPECT_EQ(posted.status, 400) << posted.body;
  EXPECT_EQ(json::parse(posted.body)["field"], "weights") << posted.body;
  EXPECT_NE(posted.body.find("is beyond +-1e15"), std::string::npos) << posted.body;
  // A trade in the query string: the same bound.
  const auto traded = fwt::curl(dir_->path(), "", daemon.url("/v1/models/m/risk?portfolio=ok&trade=" + asset_ + ":1e308"));
  EXPECT_EQ(traded.status, 400) << traded.body;
  // Stored by an older version: 422 naming the portfolio, not 200 with nulls.
  const auto stored = fwt::curl(dir_->path(), "", daemon.url("/v1/models/m/risk?portfolio=old"));
  EXPECT_EQ(stored.status, 422) << stored.body;
  EXPECT_EQ(json::parse(stored.body)["field"], "portfolio") << stored.body;
  EXPECT_NE(stored.body.find("query parameter 'portfolio': the risk figures of the portfolio book 'old' overflow"),
            std::string::npos)
      << stored.body;
}

}  // namespace
