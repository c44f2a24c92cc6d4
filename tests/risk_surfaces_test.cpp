// Portfolios and risk end to end, through the built `factorwatch` and its daemon:
// `portfolio set/list/show/delete`, `risk` in its three formats (with a benchmark, a
// what-if trade, weights from a file), and over HTTP the same answers from GET (a plain
// URL a spreadsheet imports), POST (weights in the body), PUT and DELETE of portfolios.
//
// Every risk figure is checked against an independent computation from the window's
// exposures as served (`exposures --format json`): w' (L Phi L' + Psi) w formed here with
// dense matrices, so that the test does not trust the engine's own bookkeeping.
//
// Data: planted structure (invented numbers, tests/simulated_model.h); the portfolios are
// invented too.
#include <gtest/gtest.h>

#include <cmath>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>
#include <sstream>

#include "csv_text.h"
#include "daemon_fixture.h"
#include "factorwatch/engine/caution.h"
#include "served_model.h"
#include "simulated_model.h"
#include "storage_fixtures.h"

namespace {

namespace fw = factorwatch::testing;
using nlohmann::json;

constexpr int kDates = 260, kAssets = 30, kFactors = 2;
const std::string kCautionLine = std::string("# caution: ") + factorwatch::engine::kCaution;

using fw::lines_of;

using fw::ServedModel;
using fw::served_model;

// Weights as a dense vector over the model's assets (assets it lacks are left out: they
// carry no risk, which is the documented treatment).
Eigen::VectorXd dense(const ServedModel& m, const std::map<std::string, double>& weights) {
  Eigen::VectorXd w = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(m.row.size()));
  for (const auto& [asset, weight] : weights)
    if (auto it = m.row.find(asset); it != m.row.end()) w(it->second) += weight;
  return w;
}

const json* book(const json& report, const std::string& role) {
  for (const auto& b : report["books"])
    if (b["book"] == role) return &b;
  return nullptr;
}

// A book's figures against w' Sigma w, w' L Phi L' w, w' Psi w and L'w formed densely.
// Tolerance 1e-12 relative: the two computations differ only in summation order (about
// 30 terms of similar size, each rounded at 1.1e-16).
void expect_book_matches(const json& b, const ServedModel& m, const Eigen::VectorXd& w, int periods_per_year) {
  const double total = w.dot(m.sigma() * w);
  const double systematic = w.dot(m.loadings * m.phi * m.loadings.transpose() * w);
  const double specific = w.dot(m.psi.asDiagonal() * w);
  EXPECT_NEAR(b["total"]["variance"].get<double>(), total, 1e-12 * total);
  EXPECT_NEAR(b["systematic"]["variance"].get<double>(), systematic, 1e-12 * total);
  EXPECT_NEAR(b["specific"]["variance"].get<double>(), specific, 1e-12 * total);
  EXPECT_NEAR(b["total"]["annualised_volatility"].get<double>(), std::sqrt(total * periods_per_year),
              1e-12 * std::sqrt(total * periods_per_year));
  EXPECT_NEAR(b["systematic_share"].get<double>(), systematic / total, 1e-12);
  const Eigen::VectorXd exposure = m.loadings.transpose() * w;
  double factor_sum = b["specific_contribution"]["contribution"].get<double>();
  for (int j = 0; j < kFactors; ++j) {
    EXPECT_NEAR(b["by_factor"][j]["exposure"].get<double>(), exposure(j), 1e-12 * exposure.norm());
    factor_sum += b["by_factor"][j]["contribution"].get<double>();
  }
  // Euler: the contributions add up to the volatility.
  const double sigma = std::sqrt(total);
  EXPECT_NEAR(factor_sum, sigma, 1e-12 * sigma);
  double asset_sum = 0;
  const Eigen::VectorXd sigma_w = m.sigma() * w;
  for (const auto& a : b["by_asset"]) {
    const int i = m.row.at(a["asset"]);
    EXPECT_NEAR(a["marginal"].get<double>(), sigma_w(i) / sigma, 1e-12 * sigma_w.norm() / sigma);
    asset_sum += a["contribution"].get<double>();
  }
  EXPECT_NEAR(asset_sum, sigma, 1e-12 * sigma);
}

class RiskSurfaces : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = std::make_unique<fw::TempDir>();
    fw::PlantedModel m = fw::simulate_planted_model(kDates, kAssets, kFactors, 20261202u);
    m.panel.dates = fw::business_dates(kDates);
    assets_ = m.panel.assets;
    fw::write_long_csv(dir_->file("returns.csv"), m.panel);
    // Each step must succeed; the first failure is kept for SetUp to report.
    auto step = [](const std::string& arguments) {
      if (status_ != 0) return;
      const fw::CommandResult r = fw::run_factorwatch(dir_->path(), arguments);
      status_ = r.status;
      if (r.status != 0) failure_ = arguments + ": " + r.err;
    };
    status_ = 0;
    step("load '" + dir_->file("returns.csv") + "'");
    step("model set m --method ml --factors 2 --window 120 --step 20");
    step("refresh m");
    // An invented long-short book: 8 longs, 3 shorts, and a name without returns.
    std::string book = "asset,weight\n";
    // Each weight is the double its text reads as, so that weights sent in a request body
    // and weights read from the file are the same numbers.
    for (int i = 0; i < 8; ++i) book_[assets_[i]] = std::stod(std::to_string(0.1 + 0.01 * i));
    for (int i = 20; i < 23; ++i) book_[assets_[i]] = -0.05;
    for (const auto& [asset, weight] : book_) book += asset + "," + std::to_string(weight) + "\n";
    book += "NOT-LOADED,0.02\n";
    fw::write_text(dir_->file("book.csv"), book);
    std::string bench = "asset,weight\n";
    for (const auto& a : assets_) {
      bench_[a] = std::stod(std::to_string(1.0 / kAssets));
      bench += a + "," + std::to_string(1.0 / kAssets) + "\n";
    }
    fw::write_text(dir_->file("bench.csv"), bench);
    step("portfolio set bench '" + dir_->file("bench.csv") + "' --as-of 2026-11-30");
    step("portfolio set book '" + dir_->file("book.csv") + "' --as-of 2026-11-30 --benchmark bench");
    if (status_ == 0) exposures_ = json::parse(fw::run_factorwatch(dir_->path(), "exposures m --format json").out);
  }
  static void TearDownTestSuite() { dir_.reset(); }
  void SetUp() override { ASSERT_EQ(status_, 0) << failure_; }

  static fw::CommandResult run(const std::string& arguments) { return fw::run_factorwatch(dir_->path(), arguments); }

  static inline std::unique_ptr<fw::TempDir> dir_;
  static inline int status_ = -1;
  static inline std::string failure_;
  static inline std::vector<std::string> assets_;
  static inline std::map<std::string, double> book_, bench_;
  static inline json exposures_;
};

TEST_F(RiskSurfaces, JsonMatchesTheQuadraticFormsOfTheServedModel) {
  const auto r = run("risk m book --format json");
  ASSERT_EQ(r.status, 0) << r.err;
  const json report = json::parse(r.out);
  EXPECT_EQ(report["caution"], factorwatch::engine::kCaution);
  EXPECT_EQ(report["as_of"], exposures_["as_of"]);
  EXPECT_EQ(report["periods_per_year"], 252);  // business dates: daily
  const ServedModel m = served_model(exposures_);
  const Eigen::VectorXd w = dense(m, book_), b = dense(m, bench_);

  // The stored benchmark was picked up from the portfolio: three books.
  ASSERT_EQ(report["books"].size(), 3u);
  expect_book_matches(*book(report, "portfolio"), m, w, 252);
  expect_book_matches(*book(report, "benchmark"), m, b, 252);
  expect_book_matches(*book(report, "active"), m, w - b, 252);
  EXPECT_EQ((*book(report, "portfolio"))["holdings_as_of"], "2026-11-30");

  // The name without returns is listed with its weight and reason, never dropped.
  const json& missing = (*book(report, "portfolio"))["not_modelled"];
  ASSERT_EQ(missing.size(), 1u);
  EXPECT_EQ(missing[0]["asset"], "NOT-LOADED");
  EXPECT_DOUBLE_EQ(missing[0]["weight"].get<double>(), 0.02);
  EXPECT_EQ(missing[0]["reason"], "unknown asset (no returns stored)");
  const json& weights = (*book(report, "portfolio"))["weights"];
  EXPECT_EQ(weights["holdings"], 12);
  EXPECT_EQ(weights["modelled"], 11);
  EXPECT_NEAR(weights["not_modelled_gross"].get<double>(), 0.02, 1e-15);
}

TEST_F(RiskSurfaces, CsvIsOneLongTableWithTheCaution) {
  const auto r = run("risk m book --format csv");
  ASSERT_EQ(r.status, 0) << r.err;
  const auto lines = lines_of(r.out);
  ASSERT_GT(lines.size(), 3u);
  EXPECT_EQ(lines[0], kCautionLine);
  EXPECT_EQ(lines[1].rfind("# model m version 1, window ", 0), 0u) << lines[1];
  EXPECT_EQ(lines[2],
            "book,part,name,weight,exposure,marginal,variance,contribution,contribution_annual,share,"
            "standalone_volatility,standalone_volatility_annual,reason");
  // Rows per book: total, systematic, specific, k factors, the modelled assets and the
  // not-modelled ones. Portfolio 3 + 2 + 11 + 1; benchmark 3 + 2 + 30; active 3 + 2 + 30 + 1.
  EXPECT_EQ(lines.size(), 3u + 17u + 35u + 36u);
  std::map<std::string, int> parts;
  for (std::size_t i = 3; i < lines.size(); ++i) {
    const auto f = fw::csv_fields(lines[i]);
    ASSERT_EQ(f.size(), 13u) << lines[i];
    ++parts[f[0] + "/" + f[1]];
  }
  EXPECT_EQ(parts["portfolio/asset"], 11);
  EXPECT_EQ(parts["portfolio/not_modelled"], 1);
  EXPECT_EQ(parts["active/factor"], 2);
}

TEST_F(RiskSurfaces, TableEndsWithTheCautionAndNamesTheUnmodelledHolding) {
  const auto r = run("risk m book");
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("not modelled: NOT-LOADED, weight 0.02: unknown asset"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find(std::string("Caution: ") + factorwatch::engine::kCaution), std::string::npos);
  EXPECT_NE(r.out.find("systematic share of variance"), std::string::npos);
}

TEST_F(RiskSurfaces, TradeWeightsFileAndNoBenchmark) {
  const ServedModel m = served_model(exposures_);
  fw::write_text(dir_->file("trade.csv"), "asset,weight\n" + assets_[0] + ",-0.05\n" + assets_[29] + ",0.05\n");
  const auto r = run("risk m book --no-benchmark --trade '" + dir_->file("trade.csv") + "' --format json");
  ASSERT_EQ(r.status, 0) << r.err;
  const json report = json::parse(r.out);
  ASSERT_EQ(report["books"].size(), 2u);  // portfolio, after_trade
  auto after = book_;
  after[assets_[0]] -= 0.05;
  after[assets_[29]] += 0.05;
  expect_book_matches(*book(report, "after_trade"), m, dense(m, after), 252);

  // A holdings file measured without storing it gives the stored book's figures.
  const json stored = json::parse(run("risk m book --no-benchmark --format json").out);
  const json file = json::parse(run("risk m --weights '" + dir_->file("book.csv") + "' --format json").out);
  EXPECT_EQ(stored["books"][0]["total"], file["books"][0]["total"]);
  EXPECT_EQ(stored["books"][0]["by_asset"], file["books"][0]["by_asset"]);
}

TEST_F(RiskSurfaces, FailuresNameTheInputAndABadFileChangesNothing) {
  auto r = run("risk m nobody");
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("PORTFOLIO: no portfolio named 'nobody'"), std::string::npos) << r.err;
  r = run("risk m book --benchmark nobody");
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("option '--benchmark'"), std::string::npos) << r.err;
  r = run("risk m book --holdings-as-of 2026-11-31");
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("option '--holdings-as-of'"), std::string::npos) << r.err;

  fw::write_text(dir_->file("bad.csv"), "asset,weight\nA,0.1\nB,1,5\n");
  const std::string before = fw::read_bytes(dir_->database());
  r = run("portfolio set other '" + dir_->file("bad.csv") + "'");
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find(dir_->file("bad.csv") + ":3"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("database is unchanged"), std::string::npos) << r.err;
  EXPECT_EQ(fw::read_bytes(dir_->database()), before);
}

// Holdings follow the window's date when the request names one; where none are that old,
// the earliest are used and a note says so. A benchmark follows the portfolio's date.
TEST_F(RiskSurfaces, HoldingsDatesFollowTheWindowWithANote) {
  fw::write_text(dir_->file("early.csv"), "asset,weight\n" + assets_[5] + ",1\n");
  ASSERT_EQ(run("portfolio set dated '" + dir_->file("early.csv") + "' --as-of 2026-11-30").status, 0);
  const std::string window = exposures_["as_of"];  // 2021: long before the holdings
  const json report = json::parse(run("risk m dated --as-of " + window + " --format json").out);
  EXPECT_NE(report.value("note", std::string()).find("'dated' has no holdings at or before " + window), std::string::npos)
      << report.dump();
  EXPECT_EQ(report["books"][0]["holdings_as_of"], "2026-11-30");
  const json latest = json::parse(run("risk m dated --format json").out);
  EXPECT_FALSE(latest.contains("note")) << latest.dump();
  EXPECT_EQ(run("portfolio delete dated").status, 0);
}

TEST_F(RiskSurfaces, PortfolioListShowAndDelete) {
  const json list = json::parse(run("portfolio list --format json").out);
  ASSERT_EQ(list["portfolios"].size(), 2u);
  const auto shown = run("portfolio show book --format csv");
  ASSERT_EQ(shown.status, 0) << shown.err;
  EXPECT_EQ(lines_of(shown.out).size(), 13u);  // header + 12 holdings, file order
  fw::write_text(dir_->file("tmp.csv"), "asset,weight\n" + assets_[1] + ",1\n");
  ASSERT_EQ(run("portfolio set tmp '" + dir_->file("tmp.csv") + "'").status, 0);
  EXPECT_EQ(run("portfolio delete tmp").status, 0);
  EXPECT_EQ(run("portfolio delete tmp").status, 2);
}

// The daemon answers what the command line answers, byte for byte for CSV.
TEST_F(RiskSurfaces, DaemonServesTheSameRiskAsTheCommandLine) {
  fw::DaemonProcess daemon(dir_->path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const auto csv = fw::curl(dir_->path(), "", daemon.url("/v1/models/m/risk?portfolio=book&format=csv"));
  ASSERT_EQ(csv.status, 200) << csv.body;
  EXPECT_EQ(csv.body, run("risk m book --format csv").out);
  EXPECT_EQ(csv.header("factorwatch-caution"), factorwatch::engine::kCaution);
  EXPECT_NE(csv.header("content-disposition").find("m-risk-book-"), std::string::npos);

  const auto got = fw::curl(dir_->path(), "", daemon.url("/v1/models/m/risk?portfolio=book"));
  ASSERT_EQ(got.status, 200) << got.body;
  EXPECT_EQ(json::parse(got.body), json::parse(run("risk m book --format json").out));

  // Weights in a POST body: the same figures as the stored book without its benchmark.
  json body;
  for (const auto& [asset, weight] : book_) body["weights"][asset] = weight;
  body["weights"]["NOT-LOADED"] = 0.02;
  fw::write_text(dir_->file("body.json"), body.dump());
  const auto posted = fw::curl(dir_->path(), "-H 'Content-Type: application/json' --data-binary @'" +
                                                 dir_->file("body.json") + "'",
                               daemon.url("/v1/models/m/risk"));
  ASSERT_EQ(posted.status, 200) << posted.body;
  const json stored = json::parse(run("risk m book --no-benchmark --format json").out);
  const json from_post = json::parse(posted.body);
  EXPECT_EQ(from_post["books"][0]["total"], stored["books"][0]["total"]);
  EXPECT_EQ(from_post["books"][0]["not_modelled"], stored["books"][0]["not_modelled"]);

  // A trade in the query string.
  const auto traded = fw::curl(dir_->path(), "",
                               daemon.url("/v1/models/m/risk?portfolio=book&no_benchmark=true&trade=" + assets_[0] +
                                          ":-0.05," + assets_[29] + ":0.05"));
  ASSERT_EQ(traded.status, 200) << traded.body;
  fw::write_text(dir_->file("trade.csv"), "asset,weight\n" + assets_[0] + ",-0.05\n" + assets_[29] + ",0.05\n");
  const json cli = json::parse(run("risk m book --no-benchmark --trade '" + dir_->file("trade.csv") + "' --format json").out);
  EXPECT_EQ(json::parse(traded.body)["books"][1]["total"], cli["books"][1]["total"]);
}

TEST_F(RiskSurfaces, DaemonProblemsNameTheField) {
  fw::DaemonProcess daemon(dir_->path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  auto field_of = [](const fw::HttpResult& r) { return json::parse(r.body).value("field", std::string()); };
  auto r = fw::curl(dir_->path(), "", daemon.url("/v1/models/m/risk?portfolio=nobody"));
  EXPECT_EQ(r.status, 404);
  EXPECT_EQ(field_of(r), "portfolio");
  r = fw::curl(dir_->path(), "", daemon.url("/v1/models/m/risk"));
  EXPECT_EQ(r.status, 400);
  EXPECT_EQ(field_of(r), "portfolio");
  r = fw::curl(dir_->path(), "", daemon.url("/v1/models/m/risk?portfolio=book&trade=X:abc"));
  EXPECT_EQ(r.status, 400);
  EXPECT_EQ(field_of(r), "trade");
  r = fw::curl(dir_->path(), "", daemon.url("/v1/models/nope/risk?portfolio=book"));
  EXPECT_EQ(r.status, 404);
  // A weight named twice in one object would otherwise vanish in silence.
  r = fw::curl(dir_->path(), "-H 'Content-Type: application/json' -d '{\"weights\": {\"A\": 1, \"A\": 2}}'",
               daemon.url("/v1/models/m/risk"));
  EXPECT_EQ(r.status, 400);
  EXPECT_NE(r.body.find("appears twice"), std::string::npos) << r.body;
  r = fw::curl(dir_->path(), "-H 'Content-Type: application/json' -d '{\"weights\": {\"A\": \"x\"}}'",
               daemon.url("/v1/models/m/risk"));
  EXPECT_EQ(r.status, 400);
  EXPECT_EQ(field_of(r), "weights");
}

TEST_F(RiskSurfaces, DaemonStoresPortfoliosWithTheToken) {
  fw::DaemonProcess daemon(dir_->path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  std::string token = run("token").out;
  while (!token.empty() && (token.back() == '\n' || token.back() == ' ')) token.pop_back();
  const std::string auth = "-H 'Authorization: Bearer " + token + "'";
  const std::string body = "asset,weight\n" + assets_[3] + ",0.6\n" + assets_[4] + ",0.4\n";
  fw::write_text(dir_->file("up.csv"), body);
  const std::string upload = " -X PUT -H 'Content-Type: text/csv' --data-binary @'" + dir_->file("up.csv") + "'";
  auto r = fw::curl(dir_->path(), upload, daemon.url("/v1/portfolios/uploaded?as_of=2026-11-27"));
  EXPECT_EQ(r.status, 401);
  r = fw::curl(dir_->path(), auth + upload, daemon.url("/v1/portfolios/uploaded?as_of=2026-11-27"));
  EXPECT_EQ(r.status, 201) << r.body;
  r = fw::curl(dir_->path(), auth + upload, daemon.url("/v1/portfolios/uploaded?as_of=2026-11-27"));
  EXPECT_EQ(r.status, 200) << r.body;
  EXPECT_EQ(json::parse(r.body)["outcome"], "unchanged");
  r = fw::curl(dir_->path(), "", daemon.url("/v1/portfolios/uploaded?format=csv"));
  EXPECT_EQ(r.status, 200);
  EXPECT_EQ(r.body, body);
  // A bad upload: 422 naming the line and field, nothing stored.
  fw::write_text(dir_->file("bad.csv"), "asset,weight\n" + assets_[3] + ",abc\n");
  r = fw::curl(dir_->path(), auth + " -X PUT --data-binary @'" + dir_->file("bad.csv") + "'",
               daemon.url("/v1/portfolios/broken"));
  EXPECT_EQ(r.status, 422) << r.body;
  EXPECT_EQ(json::parse(r.body)["line"], 2);
  EXPECT_EQ(json::parse(r.body)["field"], "weight");
  EXPECT_EQ(fw::curl(dir_->path(), "", daemon.url("/v1/portfolios/broken")).status, 404);
  r = fw::curl(dir_->path(), auth + " -X DELETE", daemon.url("/v1/portfolios/uploaded"));
  EXPECT_EQ(r.status, 200) << r.body;
  EXPECT_EQ(fw::curl(dir_->path(), "", daemon.url("/v1/portfolios/uploaded")).status, 404);
}

}  // namespace
