// The daemon against hostile requests, end to end: the real `factorwatch serve` on a
// loopback port, driven by curl and by a raw socket where a request must be malformed
// on purpose. Each test is a reproduction from the hardening issue: on the code before
// it, the daemon aborted, answered 500, read a body before refusing it, or let a slow
// client hold its threads. Returns are planted-structure data (invented, for tests).
#include <gtest/gtest.h>

#include <chrono>
#include <nlohmann/json.hpp>
#include <thread>
#include <vector>

#include "daemon_fixture.h"
#include "raw_http.h"
#include "simulated_model.h"
#include "storage_fixtures.h"

namespace {

namespace fw = factorwatch::testing;
using nlohmann::json;
using Clock = std::chrono::steady_clock;

std::string token_of(const std::string& data_dir) {
  std::string t = fw::run_factorwatch(data_dir, "token").out;
  while (!t.empty() && (t.back() == '\n' || t.back() == ' ')) t.pop_back();
  return t;
}

std::string host_line(const fw::DaemonProcess& daemon) {
  return "Host: 127.0.0.1:" + std::to_string(daemon.port()) + "\r\n";
}

bool alive(const fw::TempDir& dir, const fw::DaemonProcess& daemon) {
  return fw::curl(dir.path(), "", daemon.url("/v1/health")).status == 200;
}

double seconds_since(Clock::time_point start) { return std::chrono::duration<double>(Clock::now() - start).count(); }

// A stored model `m1` (PCA, 2 factors) on 40 planted assets, and a stored portfolio.
void store_model_and_portfolio(const fw::TempDir& dir) {
  auto planted = fw::simulate_planted_model(300, 40, 2, 20261204u);
  planted.panel.dates = fw::business_dates(300);
  fw::write_long_csv(dir.file("returns.csv"), planted.panel);
  ASSERT_EQ(fw::run_factorwatch(dir.path(), "load '" + dir.file("returns.csv") + "'").status, 0);
  ASSERT_EQ(fw::run_factorwatch(dir.path(), "model set m1 --method pca --factors 2 --window 250").status, 0);
  ASSERT_EQ(fw::run_factorwatch(dir.path(), "refresh m1").status, 0);
  fw::write_text(dir.file("book.csv"), "asset,weight\n" + planted.panel.assets[0] + ",0.5\n" +
                                           planted.panel.assets[1] + ",0.5\n");
  ASSERT_EQ(fw::run_factorwatch(dir.path(), "portfolio set book '" + dir.file("book.csv") + "'").status, 0);
}

// Reproduction: any byte that is not UTF-8 in the path aborted the daemon while it built
// the 404 body (SIGABRT from the JSON library), taking a running refresh with it.
TEST(HttpHardening, BytesThatAreNotUtf8InThePathGetAProblemAndTheDaemonLives) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  for (const char* path : {"/v1/x%FF", "/v1/x%C0%AE", "/v1/models/%FF/exposures", "/%80%80", "/v1/models/a%00b"}) {
    const auto r = fw::curl(dir.path(), "", daemon.url(path));
    EXPECT_EQ(r.status, 404) << path << ": " << r.body;
    EXPECT_EQ(r.header("content-type"), "application/problem+json") << path;
    EXPECT_TRUE(json::accept(r.body)) << path;
    ASSERT_TRUE(alive(dir, daemon)) << "after " << path << "\n" << daemon.log();
  }
  // A raw byte above 0x7f in the request line: refused as malformed.
  const std::string raw = fw::exchange(daemon.port(), "GET /v1/x\xFF HTTP/1.1\r\n" + host_line(daemon) + "\r\n");
  EXPECT_EQ(fw::status_of(raw), 400) << raw;
  EXPECT_TRUE(alive(dir, daemon)) << daemon.log();
  // The 405 path builds its body the same way.
  EXPECT_EQ(fw::curl(dir.path(), "-X PATCH", daemon.url("/v1/models/%FF")).status, 405);
  EXPECT_TRUE(alive(dir, daemon));
}

// Reproduction: ?format=%FF, a JSON body that is only the euro sign, and 1e400 answered
// 500; each is the client's mistake and gets a 4xx naming it.
TEST(HttpHardening, BadParametersAndBodiesAre4xxNot500) {
  fw::TempDir dir;
  store_model_and_portfolio(dir);
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string auth = "-H 'Authorization: Bearer " + token_of(dir.path()) + "'";
  const auto format = fw::curl(dir.path(), "", daemon.url("/v1/models/m1/exposures?format=%FF"));
  EXPECT_EQ(format.status, 400) << format.body;
  EXPECT_TRUE(json::accept(format.body));
  fw::write_text(dir.file("euro.json"), "\xE2\x82\xAC");
  const auto euro = fw::curl(dir.path(), auth + " -X PUT -H 'Content-Type: application/json' --data-binary @'" +
                                             dir.file("euro.json") + "'",
                             daemon.url("/v1/models/x"));
  EXPECT_EQ(euro.status, 400) << euro.body;
  EXPECT_TRUE(json::accept(euro.body));
  const auto huge = fw::curl(dir.path(), auth + " -X PUT -H 'Content-Type: application/json' -d '{\"factors\": 1e400}'",
                             daemon.url("/v1/models/x"));
  EXPECT_EQ(huge.status / 100, 4) << huge.body;
  const auto risk = fw::curl(dir.path(), "-H 'Content-Type: application/json' -d '{\"weights\": {\"A\": 1e400}}'",
                             daemon.url("/v1/models/m1/risk"));
  EXPECT_EQ(risk.status / 100, 4) << risk.body;
  EXPECT_TRUE(alive(dir, daemon)) << daemon.log();
}

// Reproduction: a 300 MB body was read in full (557 MB of memory) before its 401. The
// token and the size are now decided from the head: the answer comes before any body.
TEST(HttpHardening, TokenAndSizeAreCheckedBeforeTheBodyIsRead) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path(), "--max-upload-mb 8");
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const auto start = Clock::now();
  const std::string no_token = fw::exchange(
      daemon.port(),
      "POST /v1/returns HTTP/1.1\r\n" + host_line(daemon) + "Content-Type: text/csv\r\nContent-Length: 300000000\r\n\r\n",
      5);
  EXPECT_EQ(fw::status_of(no_token), 401) << no_token;
  // The unread body means the connection closes: the answer says so (found by the soak:
  // a client reusing the connection failed its next write).
  EXPECT_NE(no_token.find("Connection: close"), std::string::npos) << no_token;
  EXPECT_LT(seconds_since(start), 3.0);
  const std::string too_big = fw::exchange(daemon.port(),
                                           "POST /v1/returns HTTP/1.1\r\n" + host_line(daemon) + "Authorization: Bearer " +
                                               token_of(dir.path()) + "\r\nContent-Length: 300000000\r\n\r\n",
                                           5);
  EXPECT_EQ(fw::status_of(too_big), 413) << too_big;
  EXPECT_NE(fw::body_of(too_big).find("8 MiB"), std::string::npos) << too_big;
  // curl sends the whole 300 MB body unless answered first: it is answered first.
  const std::string big = dir.file("big.bin");
  ASSERT_EQ(std::system(("head -c 300000000 /dev/zero > '" + big + "'").c_str()), 0);
  const auto r = fw::curl(dir.path(), "-H 'Content-Type: text/csv' --data-binary @'" + big + "'", daemon.url("/v1/returns"));
  EXPECT_EQ(r.status, 401) << r.body;
  EXPECT_LT(fw::peak_memory_kib(daemon.pid()), 150 * 1024) << "the daemon buffered the body";
  EXPECT_TRUE(alive(dir, daemon));
}

// Reproduction: a chunked body of 12 MB was accepted against --max-upload-mb 8, and a
// gzip body was expanded without a limit (1 MB became 1,000 MB).
TEST(HttpHardening, ChunkedBodiesKeepTheLimitAndCompressedBodiesAreRefused) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path(), "--max-upload-mb 8");
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string auth = "-H 'Authorization: Bearer " + token_of(dir.path()) + "'";
  const std::string file = dir.file("twelve.csv");
  ASSERT_EQ(std::system(("(echo date,asset,return; yes 2024-01-02,AAA,0.01 | head -c 12000000) > '" + file + "'").c_str()), 0);
  const auto chunked = fw::curl(dir.path(), auth + " -H 'Transfer-Encoding: chunked' -H 'Content-Type: text/csv' "
                                                  "--data-binary @'" + file + "'",
                                daemon.url("/v1/returns"));
  EXPECT_EQ(chunked.status, 413) << chunked.body;
  EXPECT_EQ(json::parse(fw::curl(dir.path(), "", daemon.url("/v1/assets")).body)["assets"].size(), 0u);
  ASSERT_EQ(std::system(("head -c 1000000 /dev/zero | gzip > '" + dir.file("bomb.gz") + "'").c_str()), 0);
  const auto gzip = fw::curl(dir.path(), auth + " -H 'Content-Encoding: gzip' -H 'Content-Type: text/csv' "
                                               "--data-binary @'" + dir.file("bomb.gz") + "'",
                             daemon.url("/v1/returns"));
  EXPECT_EQ(gzip.status, 415) << gzip.body;
  EXPECT_EQ(json::parse(gzip.body)["field"], "Content-Encoding");
  EXPECT_TRUE(alive(dir, daemon));
}

// Reproduction: a 300 MB request line without a newline was buffered whole, and 100,000
// header fields were accepted. Heads are capped while they arrive.
TEST(HttpHardening, LongRequestLinesAndManyHeadersAreRefusedWhileArriving) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  {
    const int fd = fw::connect_loopback(daemon.port());
    ASSERT_GE(fd, 0);
    fw::send_all(fd, "GET /");
    const std::string filler(1 << 20, 'a');
    for (int i = 0; i < 300; ++i)
      if (!fw::send_all(fd, filler)) break;  // the daemon closes after its answer
    const std::string answer = fw::read_until_close(fd, 5);
    ::close(fd);
    EXPECT_EQ(fw::status_of(answer), 414) << answer.substr(0, 200);
  }
  std::string many = "GET /v1/health HTTP/1.1\r\n" + host_line(daemon);
  for (int i = 0; i < 100000; ++i) many += "X-Filler-" + std::to_string(i) + ": 1\r\n";
  many += "\r\n";
  const std::string answer = fw::exchange(daemon.port(), many);
  EXPECT_EQ(fw::status_of(answer), 431) << answer.substr(0, 200);
  EXPECT_LT(fw::peak_memory_kib(daemon.pid()), 150 * 1024);
  EXPECT_TRUE(alive(dir, daemon)) << daemon.log();
  EXPECT_NE(daemon.log().find("431"), std::string::npos) << "each refusal leaves a log line";
}

// Reproduction: 64 connections sending one byte every 10 s stopped the daemon answering
// for at least 40 s. Heads are now collected without a worker thread, under a deadline.
TEST(HttpHardening, SlowClientsHoldNoWorkerAndMeetADeadline) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path(), "--head-timeout 2");
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  std::vector<int> slow;
  for (int i = 0; i < 80; ++i) {
    const int fd = fw::connect_loopback(daemon.port());
    ASSERT_GE(fd, 0);
    fw::send_all(fd, "G");
    slow.push_back(fd);
  }
  const auto start = Clock::now();
  EXPECT_EQ(fw::curl(dir.path(), "", daemon.url("/v1/version")).status, 200);
  EXPECT_LT(seconds_since(start), 1.0) << "a normal request waited behind slow clients";
  // Past the head deadline each slow connection is answered 408 and closed.
  const std::string answer = fw::read_until_close(slow.front(), 5);
  EXPECT_EQ(fw::status_of(answer), 408) << answer;
  for (int fd : slow) ::close(fd);
}

// More connections than the cap: the slowest waiting one makes room for the newcomer.
TEST(HttpHardening, TheConnectionCapClosesTheSlowestWaitingConnection) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path(), "--threads 4 --max-connections 8");
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  std::vector<int> idle;
  for (int i = 0; i < 8; ++i) {
    const int fd = fw::connect_loopback(daemon.port());
    ASSERT_GE(fd, 0);
    fw::send_all(fd, "GET /v1/hea");
    idle.push_back(fd);
  }
  std::this_thread::sleep_for(std::chrono::milliseconds(200));
  EXPECT_EQ(fw::curl(dir.path(), "", daemon.url("/v1/version")).status, 200) << daemon.log();
  for (int fd : idle) ::close(fd);
}

// Reproduction: a 3 KB request with 1,000 ranges yielded a 16 MB response.
TEST(HttpHardening, ManyRangesAreRefused) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  std::string ranges = "bytes=0-";
  for (int i = 0; i < 999; ++i) ranges += ",0-";
  const std::string answer =
      fw::exchange(daemon.port(), "GET /v1 HTTP/1.1\r\n" + host_line(daemon) + "Range: " + ranges + "\r\n\r\n");
  EXPECT_EQ(fw::status_of(answer), 416) << answer.substr(0, 300);
  EXPECT_LT(answer.size(), 2000u);
}

// Reproduction: `curl -H 'Host: attacker.example' .../v1/portfolios/book` returned the
// holdings, so a page rebinding its name to 127.0.0.1 could read them.
TEST(HttpHardening, OnlyOurHostNamesAndOurOriginAreAnswered) {
  fw::TempDir dir;
  store_model_and_portfolio(dir);
  fw::DaemonProcess daemon(dir.path(), "--allow-host risk-box.example");
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string port = std::to_string(daemon.port());
  const auto foreign = fw::curl(dir.path(), "-H 'Host: attacker.example:" + port + "'", daemon.url("/v1/portfolios/book"));
  EXPECT_EQ(foreign.status, 421) << foreign.body;
  EXPECT_EQ(foreign.body.find("0.5"), std::string::npos);
  EXPECT_EQ(json::parse(foreign.body)["field"], "Host");
  EXPECT_EQ(fw::curl(dir.path(), "-H 'Host: attacker.example'", daemon.url("/v1/models/m1/exposures")).status, 421);
  EXPECT_EQ(fw::curl(dir.path(), "-H 'Host: localhost:" + port + "'", daemon.url("/v1/portfolios/book")).status, 200);
  EXPECT_EQ(fw::curl(dir.path(), "-H 'Host: [::1]:" + port + "'", daemon.url("/v1/portfolios/book")).status, 200);
  EXPECT_EQ(fw::curl(dir.path(), "-H 'Host: risk-box.example:" + port + "'", daemon.url("/v1/portfolios/book")).status, 200);
  EXPECT_EQ(fw::curl(dir.path(), "-H 'Host: 127.0.0.1:1'", daemon.url("/v1/portfolios/book")).status, 421);
  const auto cross = fw::curl(dir.path(), "-H 'Origin: http://attacker.example'", daemon.url("/v1/portfolios/book"));
  EXPECT_EQ(cross.status, 403) << cross.body;
  EXPECT_EQ(fw::curl(dir.path(), "-H 'Origin: null'", daemon.url("/v1/portfolios/book")).status, 403);
  EXPECT_EQ(fw::curl(dir.path(), "-H 'Origin: http://127.0.0.1:" + port + "'", daemon.url("/v1/portfolios/book")).status,
            200);
}

// Reproduction: /v1/health showed the database's absolute path to anyone.
TEST(HttpHardening, HealthShowsTheDatabasePathOnlyToTokenHolders) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const auto open = json::parse(fw::curl(dir.path(), "", daemon.url("/v1/health")).body);
  EXPECT_EQ(open["database"], "factorwatch.db");
  const auto with_token = json::parse(
      fw::curl(dir.path(), "-H 'Authorization: Bearer " + token_of(dir.path()) + "'", daemon.url("/v1/health")).body);
  EXPECT_NE(with_token["database"].get<std::string>().find(dir.path()), std::string::npos);
}

// Reproduction: 16 MB of '[' sent as text/plain to the risk route cost 1.1 GB.
TEST(HttpHardening, DeeplyNestedJsonIsRefusedWithoutBuildingIt) {
  fw::TempDir dir;
  store_model_and_portfolio(dir);
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  fw::write_text(dir.file("deep.json"), std::string(16 << 20, '['));
  const auto r = fw::curl(dir.path(), "-H 'Content-Type: text/plain' --data-binary @'" + dir.file("deep.json") + "'",
                          daemon.url("/v1/models/m1/risk"));
  EXPECT_EQ(r.status / 100, 4) << r.body;
  EXPECT_LT(fw::peak_memory_kib(daemon.pid()), 300 * 1024);
  EXPECT_TRUE(alive(dir, daemon));
}

// Found by the soak (bench/soak.py): 64 clients connecting at once had 77 of 640
// connections reset, because the HTTP library listens with a backlog of 5.
TEST(HttpHardening, ABurstOfConnectionsIsAnsweredNotReset) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string request = "GET /v1/version HTTP/1.1\r\n" + host_line(daemon) + "Connection: close\r\n\r\n";
  int answered = 0, attempts = 0;
  for (int round = 0; round < 5; ++round) {
    std::vector<int> sockets;
    for (int i = 0; i < 64; ++i) sockets.push_back(fw::connect_loopback(daemon.port()));
    for (int fd : sockets)
      if (fd >= 0) fw::send_all(fd, request);
    for (int fd : sockets) {
      ++attempts;
      if (fd >= 0 && fw::status_of(fw::read_until_close(fd, 10)) == 200) ++answered;
      if (fd >= 0) ::close(fd);
    }
  }
  EXPECT_EQ(answered, attempts);
}

}  // namespace
