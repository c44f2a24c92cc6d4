// End to end: the nightly routine as a user runs it (load, model set, refresh) and the
// reading commands in their three formats, with the caution and the exit codes.
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>
#include <sstream>

#include "factorwatch/engine/caution.h"
#include "factorwatch/storage/returns_csv.h"
#include "simulated_model.h"
#include "storage_fixtures.h"

namespace {

using namespace factorwatch;
using factorwatch::testing::TempDir;
using factorwatch::testing::run_factorwatch;

class NightlyRoutine : public ::testing::Test {
 protected:
  void SetUp() override {
    engine::ReturnsPanel p = factorwatch::testing::simulate_planted_model(130, 25, 2, 21).panel;
    p.dates = factorwatch::testing::business_dates(130);
    // The history arrives first, the last date the next "night".
    engine::ReturnsPanel history = p, night = p;
    history.dates.pop_back();
    history.values.conservativeResize(129, p.width());
    night.dates = {p.dates.back()};
    night.values = p.values.bottomRows(1);
    factorwatch::testing::write_long_csv(dir.file("history.csv"), history);
    factorwatch::testing::write_long_csv(dir.file("night.csv"), night);
    last_date = p.dates.back().iso();
    before_last = p.dates[128].iso();
  }
  TempDir dir;
  std::string last_date, before_last;
};

TEST_F(NightlyRoutine, LoadDefineRefreshThenOneWindowANight) {
  auto r = run_factorwatch(dir.path(), "load " + dir.file("history.csv"));
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("new data"), std::string::npos) << r.out;
  r = run_factorwatch(dir.path(), "model set demo --method ml --factors 2 --window 100");
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("created"), std::string::npos);
  r = run_factorwatch(dir.path(), "refresh demo");
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("30 windows fitted"), std::string::npos) << r.out;  // as-of indices 99..128
  EXPECT_NE(r.out.find(engine::kCaution), std::string::npos);

  r = run_factorwatch(dir.path(), "load " + dir.file("night.csv"));
  ASSERT_EQ(r.status, 0) << r.err;
  r = run_factorwatch(dir.path(), "refresh");  // every model
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("1 window fitted, as of " + last_date), std::string::npos) << r.out;
  r = run_factorwatch(dir.path(), "load " + dir.file("night.csv"));  // the same file again
  EXPECT_NE(r.out.find("no change"), std::string::npos) << r.out;
  // A feed that sends the same file again has stopped: exit 3, saying so.
  EXPECT_EQ(r.status, 3) << r.out << r.err;
  EXPECT_NE(r.out.find("no new date: the file brings no date after the latest stored one, " + last_date), std::string::npos)
      << r.out;
  r = run_factorwatch(dir.path(), "refresh demo");
  EXPECT_NE(r.out.find("nothing to fit"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("  no new date: nothing is stored after the latest window, " + last_date +
                       "; the feed has not moved on\n"),
            std::string::npos)
      << r.out;

  // windows: 31, in three formats, all with the caution.
  r = run_factorwatch(dir.path(), "windows demo --format json");
  ASSERT_EQ(r.status, 0) << r.err;
  const auto windows = nlohmann::json::parse(r.out);
  EXPECT_EQ(windows["windows"].size(), 31u);
  EXPECT_EQ(windows["caution"], engine::kCaution);
  EXPECT_EQ(windows["windows"].back()["as_of"], last_date);
  r = run_factorwatch(dir.path(), "windows demo --format csv");
  EXPECT_EQ(r.out.rfind("# caution: " + std::string(engine::kCaution), 0), 0u) << r.out.substr(0, 200);
  r = run_factorwatch(dir.path(), "windows demo");
  EXPECT_NE(r.out.find(engine::kCaution), std::string::npos);
}

// A model behind the newest data says so: `model show` names the latest stored date and
// the windows a refresh would fit; before, it said "latest as of ..." and nothing about
// the dates stored after it.
TEST_F(NightlyRoutine, ModelShowSaysWhenTheModelIsBehindTheData) {
  ASSERT_EQ(run_factorwatch(dir.path(), "load " + dir.file("history.csv")).status, 0);
  ASSERT_EQ(run_factorwatch(dir.path(), "model set demo --method pca --factors 2 --window 100").status, 0);
  auto r = run_factorwatch(dir.path(), "model show demo");
  EXPECT_NE(r.out.find("  data:          returns stored to " + before_last + "; behind: 30 windows to fit (new dates or "
                       "stale windows); run: factorwatch refresh demo\n"),
            std::string::npos)
      << r.out;
  ASSERT_EQ(run_factorwatch(dir.path(), "refresh demo").status, 0);
  r = run_factorwatch(dir.path(), "model show demo");
  EXPECT_NE(r.out.find("  data:          returns stored to " + before_last + "; up to date\n"), std::string::npos) << r.out;
  ASSERT_EQ(run_factorwatch(dir.path(), "load " + dir.file("night.csv")).status, 0);
  const auto j = nlohmann::json::parse(run_factorwatch(dir.path(), "model show demo --format json").out);
  EXPECT_EQ(j["latest_stored_date"], last_date);
  EXPECT_EQ(j["latest_as_of"], before_last);
  EXPECT_EQ(j["pending_windows"], 1);
  EXPECT_EQ(j["behind"], true);
}

// Exit 3 means "no new date", whatever else the file did: a revision of past days (a
// correction) is stored, and still says the feed has not moved on; a file that adds a
// date after the latest stored one exits 0, and so does the first load.
TEST_F(NightlyRoutine, AFileWithNoNewDateExitsThree) {
  auto r = run_factorwatch(dir.path(), "load " + dir.file("history.csv"));
  ASSERT_EQ(r.status, 0) << r.err;
  factorwatch::testing::write_text(dir.file("revision.csv"), "date,asset,return\n" + before_last + ",P1000,0.0123\n");
  r = run_factorwatch(dir.path(), "load " + dir.file("revision.csv"));
  EXPECT_EQ(r.status, 3) << r.out << r.err;
  EXPECT_NE(r.out.find("correction"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("no new date"), std::string::npos) << r.out;
  r = run_factorwatch(dir.path(), "load " + dir.file("night.csv"));
  EXPECT_EQ(r.status, 0) << r.out << r.err;
  EXPECT_EQ(r.out.find("no new date"), std::string::npos) << r.out;
}

// deploy/nightly.sh passes the load's news on: 0 with a new date, 3 with none (after
// refreshing, so a revision is still refitted), 2 for a rejected file (no refresh).
TEST_F(NightlyRoutine, TheNightlyScriptsExitStatusSaysWhatHappened) {
  ASSERT_EQ(run_factorwatch(dir.path(), "model set demo --method pca --factors 2 --window 100 --step 10").status, 0);
  const std::string script = "FACTORWATCH_DATA='" + dir.path() + "' FACTORWATCH_BIN='" +
                             factorwatch::testing::factorwatch_command() + "' " FACTORWATCH_SOURCE_DIR "/deploy/nightly.sh ";
  auto r = factorwatch::testing::run_shell(script + dir.file("history.csv"), dir.file("err.txt"));
  EXPECT_EQ(r.status, 0) << r.out << r.err;
  EXPECT_NE(r.out.find("windows fitted"), std::string::npos) << r.out;
  r = factorwatch::testing::run_shell(script + dir.file("history.csv"), dir.file("err.txt"));
  EXPECT_EQ(r.status, 3) << r.out << r.err;
  EXPECT_NE(r.out.find("the feed has not moved on"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("nothing to fit"), std::string::npos) << r.out;  // the refresh ran
  factorwatch::testing::write_text(dir.file("bad.csv"), "date,asset,return\n" + last_date + ",P1000,12%\n");
  r = factorwatch::testing::run_shell(script + dir.file("bad.csv"), dir.file("err.txt"));
  EXPECT_EQ(r.status, 2) << r.out << r.err;
  EXPECT_NE(r.out.find("nothing refreshed"), std::string::npos) << r.out;
  r = factorwatch::testing::run_shell(script + dir.file("night.csv"), dir.file("err.txt"));
  EXPECT_EQ(r.status, 0) << r.out << r.err;
  EXPECT_NE(r.out.find("1 window fitted"), std::string::npos) << r.out;
}

// The CSV a spreadsheet imports and the JSON a script reads carry the same numbers, and
// our own reader takes the CSV back (the caution is a '#' comment line before the header).
TEST_F(NightlyRoutine, ExposuresAgreeAcrossFormats) {
  ASSERT_EQ(run_factorwatch(dir.path(), "load " + dir.file("history.csv")).status, 0);
  ASSERT_EQ(run_factorwatch(dir.path(), "model set m --factors 2 --window 100 --first-as-of " + before_last).status, 0);
  ASSERT_EQ(run_factorwatch(dir.path(), "refresh m").status, 0);
  auto json = run_factorwatch(dir.path(), "exposures m --format json");
  ASSERT_EQ(json.status, 0) << json.err;
  const auto j = nlohmann::json::parse(json.out);
  EXPECT_EQ(j["caution"], engine::kCaution);
  EXPECT_EQ(j["as_of"], before_last);
  ASSERT_EQ(j["assets"].size(), 25u);
  const auto csv = run_factorwatch(dir.path(), "exposures m --format csv");
  ASSERT_EQ(csv.status, 0);
  EXPECT_EQ(csv.out.rfind("# caution: ", 0), 0u);
  std::istringstream lines(csv.out);
  std::string line;
  while (std::getline(lines, line) && line[0] == '#') {
  }
  EXPECT_EQ(line, "asset,f1,f2,communality,specific_variance,uniqueness,heywood");
  for (std::size_t i = 0; i < 25; ++i) {
    ASSERT_TRUE(std::getline(lines, line));
    std::istringstream cells(line);
    std::string cell;
    std::getline(cells, cell, ',');
    EXPECT_EQ(cell, j["assets"][i]["asset"]);
    std::getline(cells, cell, ',');
    EXPECT_EQ(std::stod(cell), j["assets"][i]["loadings"][0].get<double>());  // round-trip precision in both
    std::getline(cells, cell, ',');
    std::getline(cells, cell, ',');
    EXPECT_EQ(std::stod(cell), j["assets"][i]["communality"].get<double>());
  }
  const auto table = run_factorwatch(dir.path(), "exposures m --limit 3");
  EXPECT_NE(table.out.find("... 22 more"), std::string::npos) << table.out;
  EXPECT_NE(table.out.find(engine::kCaution), std::string::npos);

  // Chosen assets, in the order asked, with a reason for one the window lacks.
  const auto some = run_factorwatch(dir.path(), "exposures m --format json --assets P1003,P1001,ZQ-unknown");
  const auto s = nlohmann::json::parse(some.out);
  ASSERT_EQ(s["assets"].size(), 2u);
  EXPECT_EQ(s["assets"][0]["asset"], "P1003");
  EXPECT_EQ(s["not_in_window"][0]["asset"], "ZQ-unknown");

  // specific-risk: annualised by sqrt(252) for daily dates (common practice).
  const auto risk = run_factorwatch(dir.path(), "specific-risk m --format json --assets P1000");
  ASSERT_EQ(risk.status, 0) << risk.err;
  const auto sr = nlohmann::json::parse(risk.out);
  EXPECT_EQ(sr["caution"], engine::kCaution);
  EXPECT_EQ(sr["periods_per_year"], 252);
  const double psi = sr["assets"][0]["specific_variance"].get<double>();
  EXPECT_DOUBLE_EQ(sr["assets"][0]["specific_volatility_annual"].get<double>(), std::sqrt(psi * 252));
  EXPECT_DOUBLE_EQ(psi, j["assets"][0]["specific_variance"].get<double>());
  const auto risk_table = run_factorwatch(dir.path(), "specific-risk m");
  EXPECT_NE(risk_table.out.find(engine::kCaution), std::string::npos);
  const auto risk_csv = run_factorwatch(dir.path(), "specific-risk m --format csv");
  EXPECT_EQ(risk_csv.out.rfind("# caution: ", 0), 0u);
}

TEST_F(NightlyRoutine, MistakesGetPlainMessagesAndExitCodes) {
  auto r = run_factorwatch(dir.path(), "refresh nosuch");
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("no model named 'nosuch'"), std::string::npos) << r.err;
  r = run_factorwatch(dir.path(), "exposures nosuch");
  EXPECT_EQ(r.status, 2);
  r = run_factorwatch(dir.path(), "model set 'bad name' --factors 2");
  EXPECT_EQ(r.status, 2);
  r = run_factorwatch(dir.path(), "model set m --factors 0");
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("'--factors'"), std::string::npos) << r.err;
  ASSERT_EQ(run_factorwatch(dir.path(), "model set m --factors 2 --window 100").status, 0);
  r = run_factorwatch(dir.path(), "exposures m");  // defined but never refreshed
  EXPECT_EQ(r.status, 1);
  EXPECT_NE(r.err.find("factorwatch refresh m"), std::string::npos) << r.err;
  r = run_factorwatch(dir.path(), "exposures m --as-of 2021-13-01");
  EXPECT_NE(r.status, 0);
  r = run_factorwatch(dir.path(), "load " + dir.file("missing.csv"));
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("missing.csv"), std::string::npos) << r.err;
}

// A universe list file (header, comment, blank line allowed) restricts a model; a
// duplicate name is refused with its line.
TEST_F(NightlyRoutine, UniverseFileAndItsErrors) {
  ASSERT_EQ(run_factorwatch(dir.path(), "load " + dir.file("history.csv")).status, 0);
  factorwatch::testing::write_text(dir.file("universe.txt"), "asset\n# large caps\nP1002\n\nP1005\nP1007\nP1011\n");
  auto r = run_factorwatch(dir.path(), "model set part --factors 1 --window 100 --step 29 --universe " + dir.file("universe.txt"));
  ASSERT_EQ(r.status, 0) << r.err;
  ASSERT_EQ(run_factorwatch(dir.path(), "refresh part").status, 0);
  r = run_factorwatch(dir.path(), "exposures part --format json");
  const auto j = nlohmann::json::parse(r.out);
  ASSERT_EQ(j["assets"].size(), 4u);
  EXPECT_EQ(j["assets"][0]["asset"], "P1002");
  factorwatch::testing::write_text(dir.file("twice.txt"), "P1002\nP1005\nP1002\n");
  r = run_factorwatch(dir.path(), "model set part --universe " + dir.file("twice.txt"));
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("twice.txt:3: field 'asset': asset 'P1002' is listed twice"), std::string::npos) << r.err;
  // Back to every asset: a new version, the old windows kept.
  r = run_factorwatch(dir.path(), "model set part --universe all");
  EXPECT_NE(r.out.find("new version 2"), std::string::npos) << r.out;
}

// Prices in, simple (or log) returns stored: p_t / p_(t-1) - 1 between consecutive dates.
TEST_F(NightlyRoutine, PricesAreStoredAsReturns) {
  factorwatch::testing::write_text(dir.file("prices.csv"), "date,ZQ-0001,ZQ-0002\n2024-01-02,100,50\n"
                                                           "2024-01-03,101,49\n2024-01-04,99.99,49.49\n");
  auto r = run_factorwatch(dir.path(), "load --prices " + dir.file("prices.csv"));
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("prices (simple returns)"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("2024-01-03 .. 2024-01-04 (2)"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("4 new"), std::string::npos) << r.out;
  r = run_factorwatch(dir.path(), "load --log-returns " + dir.file("prices.csv"));
  EXPECT_EQ(r.status, 2);  // --log-returns needs --prices
}

}  // namespace
