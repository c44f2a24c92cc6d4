// Issue 16 over HTTP, in process (handler_fixture.h): a model whose factors its windows
// cannot identify. PUT refuses an explicit universe that never can, warns for every
// stored asset; the windows route, the refresh job and the window's problem say why.
// Returns are planted-structure data (invented, for tests).
#include <gtest/gtest.h>

#include <chrono>
#include <nlohmann/json.hpp>
#include <string>
#include <thread>

#include "factorwatch/pipeline/refresh.h"
#include "handler_fixture.h"
#include "factor_limit_expected.h"
#include "simulated_model.h"
#include "storage_fixtures.h"

namespace {

namespace fw = factorwatch::testing;
using nlohmann::json;

const std::string& kWindowReason = fw::kFortyFactorsOnThirtyAssets;

void upload(fw::InProcessApi& api, const fw::TempDir& dir) {
  auto planted = fw::simulate_planted_model(300, 30, 3, 20261217u);
  planted.panel.dates = fw::business_dates(300);
  fw::write_long_csv(dir.file("returns.csv"), planted.panel);
  const auto up = api.call("POST", "/v1/returns?file=returns.csv", fw::read_bytes(dir.file("returns.csv")), "text/csv");
  ASSERT_EQ(up.status, 200) << *up.body;
}

TEST(TooManyFactorsApi, AnExplicitUniverseThatCannotIdentifyTheFactorsIsA400NamingFactors) {
  fw::TempDir dir;
  fw::InProcessApi api(dir.path());
  json universe = json::array();
  for (int i = 0; i < 30; ++i) universe.push_back("A" + std::to_string(10 + i));
  const json body = {{"universe", universe}, {"factors", 40}, {"window", 252}};
  const auto r = api.call("PUT", "/v1/models/u40", body.dump());
  EXPECT_EQ(r.status, 400) << *r.body;
  const json p = json::parse(*r.body);
  EXPECT_EQ(p["field"], "factors");
  EXPECT_EQ(p["detail"],
            "member 'factors' = 40: a universe of 30 assets with windows of 252 dates identifies at most 22 factors by "
            "maximum likelihood (Ledermann bound); choose 22 factors or fewer");
  EXPECT_EQ(api.call("GET", "/v1/models/u40").status, 404);
  const json fits = {{"universe", universe}, {"factors", 22}, {"window", 252}};
  const auto ok = api.call("PUT", "/v1/models/u40", fits.dump());
  EXPECT_EQ(ok.status, 201) << *ok.body;
  const json answer = json::parse(*ok.body);
  EXPECT_TRUE(answer.contains("warning") && answer.at("warning").is_null()) << answer.dump();
}

TEST(TooManyFactorsApi, EveryStoredAssetWarnsAndTheWindowsJobAndProblemsSayWhy) {
  fw::TempDir dir;
  fw::InProcessApi api(dir.path());
  upload(api, dir);
  const auto put = api.call("PUT", "/v1/models/k40", R"({"factors":40,"window":252,"step":10})");
  ASSERT_EQ(put.status, 201) << *put.body;
  EXPECT_EQ(json::parse(*put.body)["warning"],
            "factors = 40: a window of the 30 stored assets and 252 dates identifies at most 22 factors by maximum "
            "likelihood (Ledermann bound); choose 22 factors or fewer; until more assets are stored, every window "
            "will be stored as not usable");

  // The refresh as a job: its summary and its error carry the reason.
  const auto started = api.call("POST", "/v1/models/k40/refresh");
  ASSERT_EQ(started.status, 202) << *started.body;
  const std::string job_path = "/v1/jobs/" + std::to_string(json::parse(*started.body)["id"].get<long>());
  json job;
  for (int i = 0; i < 600; ++i) {  // a bound on waiting, not a timing assertion
    job = json::parse(*api.call("GET", job_path).body);
    if (job["state"] != "queued" && job["state"] != "running") break;
    std::this_thread::sleep_for(std::chrono::milliseconds(100));
  }
  ASSERT_EQ(job["state"], "failed") << job.dump();
  EXPECT_EQ(job["summary"]["unusable"], 5);
  EXPECT_EQ(job["summary"]["unusable_reason"], kWindowReason);
  EXPECT_EQ(job["error"], "5 window(s) have no usable fit (stored and flagged): " + kWindowReason);

  const auto windows = api.call("GET", "/v1/models/k40/windows");
  ASSERT_EQ(windows.status, 200) << *windows.body;
  const json w = json::parse(*windows.body);
  ASSERT_EQ(w["windows"].size(), 5u);
  for (const auto& row : w["windows"]) {
    EXPECT_EQ(row["termination"], "not_identified");
    EXPECT_EQ(row.value("reason", std::string("(absent)")), kWindowReason);
  }
  const auto csv = api.call("GET", "/v1/models/k40/windows?format=csv");
  ASSERT_EQ(csv.status, 200);
  EXPECT_NE(csv.body->find("," + kWindowReason + "\n"), std::string::npos) << *csv.body;

  const auto exposures = api.call("GET", "/v1/models/k40/exposures");
  EXPECT_EQ(exposures.status, 409) << *exposures.body;
  const std::string detail = json::parse(*exposures.body)["detail"];
  EXPECT_NE(detail.find("has no usable fit (not_identified: " + kWindowReason + ")"), std::string::npos) << detail;
  const auto risk = api.call("POST", "/v1/models/k40/risk", R"({"weights":{"P1000":1}})");
  EXPECT_EQ(risk.status, 409) << *risk.body;
  EXPECT_NE(json::parse(*risk.body)["detail"].get<std::string>().find(kWindowReason), std::string::npos) << *risk.body;
}

// A usable window has no reason: null in JSON, empty in CSV.
TEST(TooManyFactorsApi, AUsableWindowHasNoReason) {
  fw::TempDir dir;
  fw::InProcessApi api(dir.path());
  upload(api, dir);
  ASSERT_EQ(api.call("PUT", "/v1/models/k3", R"({"factors":3,"window":252,"step":50})").status, 201);
  const auto summary = factorwatch::pipeline::refresh_model(api.context().database(), "k3");
  ASSERT_EQ(summary.unusable, 0u);
  EXPECT_TRUE(summary.unusable_reason.empty());
  const json w = json::parse(*api.call("GET", "/v1/models/k3/windows").body);
  ASSERT_FALSE(w["windows"].empty());
  for (const auto& row : w["windows"]) EXPECT_TRUE(row.contains("reason") && row.at("reason").is_null()) << row.dump();
}

}  // namespace
