// JSON request bodies the daemon cannot read get a 400 naming the body, never a 500, and
// leave the daemon serving: the real `factorwatch serve` driven by curl (issue 13: a body
// that is only "€", a number such as 1e400 in PUT /v1/models/{name} or POST
// /v1/models/{name}/risk). The same bodies are the seeds of the regressions the fuzz
// targets guard (fuzz/fuzz_model_body.cpp, fuzz/fuzz_risk_body.cpp).
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>

#include "daemon_fixture.h"
#include "storage_fixtures.h"

namespace {

namespace fw = factorwatch::testing;
using nlohmann::json;

std::string token_of(const std::string& data_dir) {
  std::string t = fw::run_factorwatch(data_dir, "token").out;
  while (!t.empty() && (t.back() == '\n' || t.back() == ' ')) t.pop_back();
  return t;
}

// Sends `body` (any bytes, from a file so that the shell never sees them).
fw::HttpResult send(const fw::TempDir& dir, const fw::DaemonProcess& daemon, const std::string& token,
                    const std::string& method, const std::string& path, const std::string& body) {
  fw::write_text(dir.file("body"), body);
  return fw::curl(dir.path(),
                  "-X " + method + " -H 'Authorization: Bearer " + token +
                      "' -H 'Content-Type: application/json' --data-binary @'" + dir.file("body") + "'",
                  daemon.url(path));
}

// A 400 problem about the body, whose JSON is well formed whatever bytes the body held.
void expect_body_problem(const fw::HttpResult& r, const std::string& what) {
  EXPECT_EQ(r.status, 400) << what << ": " << r.body;
  const json problem = json::parse(r.body, nullptr, false);
  ASSERT_FALSE(problem.is_discarded()) << what << ": the problem is not JSON: " << r.body;
  EXPECT_EQ(problem.value("field", ""), "body") << what << ": " << r.body;
}

TEST(RequestBody, UnreadableJsonIsA400ForModelsAndRiskAndTheDaemonServesOn) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string token = token_of(dir.path());
  // Each answered 500 before: the parser's message quoted a lone byte of "€" or of an
  // ill-formed string (not UTF-8, so the problem could not be written), or the number
  // overflow escaped as an exception that is not a parse error.
  const std::vector<std::pair<std::string, std::string>> bodies = {
      {"only a euro sign", "\xE2\x82\xAC"},
      {"a lone continuation byte", "\x80"},
      {"an ill-formed string", "{\"window\": \"\xFF\"}"},
      {"1e400 as the body", "1e400"},
      {"1e400 in a member", "{\"window\": 1e400}"},
      {"-1e400 in a weight", "{\"weights\": {\"ZQ-0001\": -1e400}}"},
  };
  for (const auto& [what, body] : bodies) {
    expect_body_problem(send(dir, daemon, token, "PUT", "/v1/models/x", body), "PUT model, " + what);
    expect_body_problem(send(dir, daemon, token, "POST", "/v1/models/m1/risk", body), "POST risk, " + what);
  }
  EXPECT_EQ(fw::curl(dir.path(), "", daemon.url("/v1/health")).status, 200);
  // Nothing was defined.
  EXPECT_EQ(fw::curl(dir.path(), "", daemon.url("/v1/models/x")).status, 404);
  EXPECT_EQ(daemon.stop(), 0) << daemon.log();
}

TEST(RequestBody, AModelDefinitionNamingAMemberTwiceIsRefused) {
  // Read strictly, as every other JSON body: a parser would otherwise keep one of the two
  // windows in silence.
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string token = token_of(dir.path());
  const auto r = send(dir, daemon, token, "PUT", "/v1/models/x", "{\"window\": 504,\n \"window\": 252}");
  expect_body_problem(r, "member twice");
  EXPECT_NE(r.body.find("member 'window' appears twice"), std::string::npos) << r.body;
  EXPECT_EQ(fw::curl(dir.path(), "", daemon.url("/v1/models/x")).status, 404);
  // The same definition once is taken.
  EXPECT_EQ(send(dir, daemon, token, "PUT", "/v1/models/x", "{\"window\": 504}").status, 201);
}

TEST(RequestBody, AUniverseNameThatLooksLikeAnOptionDoesNotOverflowTheStack) {
  // A universe listing one long name twice: the message quoting it went through a
  // std::regex that recursed once per letter, and the daemon died of a stack overflow
  // (100 000 letters were enough on an 8 MiB stack; 1 000 000 leave no doubt).
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string token = token_of(dir.path());
  const std::string name = "option '--" + std::string(1000000, 'a');
  const std::string body = "{\"universe\": [\"" + name + "\", \"" + name + "\"]}";
  const auto r = send(dir, daemon, token, "PUT", "/v1/models/x", body);
  EXPECT_EQ(r.status, 400);
  const json problem = json::parse(r.body, nullptr, false);
  ASSERT_TRUE(problem.is_object()) << r.body.substr(0, 200);
  EXPECT_EQ(problem.value("field", ""), "universe");
  // The identifier rule (at most 128 bytes) now refuses the name before any message
  // quotes it whole; the quote is cut short.
  EXPECT_EQ(problem.value("detail", "").rfind("universe: the asset name 'option '--aaa", 0), 0u) << r.body.substr(0, 300);
  EXPECT_LT(r.body.size(), 1000u);
  EXPECT_EQ(fw::curl(dir.path(), "", daemon.url("/v1/health")).status, 200);
  EXPECT_EQ(daemon.stop(), 0) << daemon.log();
}

}  // namespace
