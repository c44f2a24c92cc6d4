// The HTTP daemon end to end: the real `factorwatch serve` binary on a free loopback port
// with a temporary data directory, driven by real HTTP clients (curl, and the Python
// example of docs/examples). Returns are planted-structure data (invented, for tests).
#include <gtest/gtest.h>
#include <sys/stat.h>

#include <atomic>
#include <fstream>
#include <nlohmann/json.hpp>
#include <regex>
#include <set>
#include <sstream>
#include <thread>

#include "daemon_fixture.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/engine/caution.h"
#include "simulated_model.h"
#include "storage_fixtures.h"

namespace {

namespace fw = factorwatch::testing;
using nlohmann::json;

// `assets` x `dates` business days from a 2-factor planted model, as a long CSV.
std::string write_returns(const fw::TempDir& dir, int dates, const std::string& name = "returns.csv", int assets = 40) {
  auto planted = fw::simulate_planted_model(dates, assets, 2, 20261202u);
  planted.panel.dates = fw::business_dates(dates);
  const std::string path = dir.file(name);
  fw::write_long_csv(path, planted.panel);
  return path;
}

std::string token_of(const std::string& data_dir) {
  std::string t = fw::run_factorwatch(data_dir, "token").out;
  while (!t.empty() && (t.back() == '\n' || t.back() == ' ')) t.pop_back();
  return t;
}

std::string bearer(const std::string& token) { return "-H 'Authorization: Bearer " + token + "'"; }

// Upload with the token, define a model, refresh it with the CLI (fast and synchronous).
void load_and_fit(const fw::TempDir& dir, const fw::DaemonProcess& daemon, const std::string& token, int dates,
                  const std::string& model_json, int assets = 40) {
  const std::string file = write_returns(dir, dates, "returns.csv", assets);
  auto up = fw::curl(dir.path(), bearer(token) + " -H 'Content-Type: text/csv' --data-binary @'" + file + "'",
                     daemon.url("/v1/returns?file=returns.csv"));
  ASSERT_EQ(up.status, 200) << up.body;
  auto put = fw::curl(dir.path(), bearer(token) + " -X PUT -d '" + model_json + "'", daemon.url("/v1/models/m"));
  ASSERT_EQ(put.status, 201) << put.body;
  ASSERT_EQ(fw::run_factorwatch(dir.path(), "refresh m").status, 0);
}

TEST(Daemon, BecomesReadyAndPrintsAddressTokenCommandAndAnExample) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_NE(daemon.port(), 0) << daemon.log();
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const json health = json::parse(fw::curl(dir.path(), "", daemon.url("/v1/health")).body);
  EXPECT_EQ(health["status"], "ready");
  EXPECT_EQ(health["schema_version"], factorwatch::storage::current_schema_version());
  const json version = json::parse(fw::curl(dir.path(), "", daemon.url("/v1/version")).body);
  EXPECT_EQ(version["api"], "v1");
  const std::string banner = daemon.banner();
  EXPECT_NE(banner.find(std::string(FACTORWATCH_COMMAND) + " token --data"), std::string::npos) << banner;
  EXPECT_NE(banner.find("try:     curl 'http://127.0.0.1:"), std::string::npos) << banner;
  EXPECT_NE(banner.find(factorwatch::engine::kCaution), std::string::npos);
  // The token file was created owner-only on this first start.
  struct stat info {};
  ASSERT_EQ(::stat(dir.file("access-token").c_str(), &info), 0);
  EXPECT_EQ(info.st_mode & 0777, 0600u);
  EXPECT_EQ(token_of(dir.path()).size(), 64u);
  EXPECT_EQ(daemon.stop(), 0);
  // One log line per request: method, path, status, milliseconds.
  EXPECT_TRUE(std::regex_search(daemon.log(), std::regex(R"(GET /v1/version 200 [0-9.]+ ms)"))) << daemon.log();
}

// With the HTTP library's default SO_REUSEPORT, a second daemon (on another database)
// bound the same port and the kernel spread requests between the two: answers alternated
// between databases. The second is refused, naming the process that holds the port, and
// the first goes on answering. (On the old code the second listens until `timeout` ends
// it: status 124.)
TEST(Daemon, ASecondDaemonOnATakenPortIsRefusedAndNamesTheHolder) {
  fw::TempDir first_dir, second_dir;
  fw::DaemonProcess first(first_dir.path());
  ASSERT_TRUE(first.ready()) << first.log();
  const fw::CommandResult second =
      fw::run_shell("timeout 20 " + fw::factorwatch_command() + " --data '" + second_dir.path() + "' serve --port " +
                        std::to_string(first.port()),
                    second_dir.file("stderr"));
  EXPECT_EQ(second.status, 1) << second.out << second.err;
  EXPECT_NE(second.err.find("the port is taken: process " + std::to_string(first.pid())), std::string::npos)
      << second.err;
  EXPECT_NE(second.err.find("listens on 127.0.0.1:" + std::to_string(first.port())), std::string::npos) << second.err;
  EXPECT_EQ(second.out.find("listening on"), std::string::npos) << second.out;
  const fw::HttpResult health = fw::curl(first_dir.path(), "", first.url("/v1/health"));
  EXPECT_EQ(health.status, 200);
  EXPECT_EQ(first.stop(), 0);
}

// The HTTP library also files the fields of a form-encoded body (what `curl -d` sends)
// among the query parameters; the daemon took them from there, so a body field acted as a
// query parameter. Here a DELETE with the body "as_of=1999-01-01" removed nothing (404:
// no holdings as of 1999-01-01) instead of deleting every date as its URL asks.
TEST(Daemon, AFormBodyIsNeverReadAsQueryParameters) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string auth = bearer(token_of(dir.path())) + " ";
  const auto put = fw::curl(dir.path(), auth + "-X PUT -H 'Content-Type: text/csv' --data-binary 'asset,weight\nZQ-1,1\n'",
                            daemon.url("/v1/portfolios/book?as_of=2021-03-31"));
  ASSERT_EQ(put.status, 201) << put.body;
  const auto removed = fw::curl(dir.path(), auth + "-X DELETE -d 'as_of=1999-01-01'", daemon.url("/v1/portfolios/book"));
  EXPECT_EQ(removed.status, 200) << removed.body;
  EXPECT_EQ(json::parse(removed.body)["removed_dates"], 1) << removed.body;
  EXPECT_EQ(daemon.stop(), 0);
}

// Every route the server has (GET /v1 lists its route table) appears in
// docs/openapi.yaml with its method, and the document lists no route the server lacks.
TEST(Daemon, EveryRouteIsInTheOpenApiDocument) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const json index = json::parse(fw::curl(dir.path(), "", daemon.url("/v1")).body);
  std::set<std::string> served;
  for (const auto& r : index["routes"]) served.insert(r["method"].get<std::string>() + " " + r["path"].get<std::string>());
  ASSERT_GE(served.size(), 14u);

  std::ifstream yaml(std::string(FACTORWATCH_SOURCE_DIR) + "/docs/openapi.yaml");
  ASSERT_TRUE(yaml.good());
  std::set<std::string> documented;
  const std::regex path_line(R"(^  (/v1[^:\s]*):\s*$)"), method_line(R"(^    (get|put|post|patch|delete):\s*$)");
  std::string line, path;
  bool in_paths = false;
  while (std::getline(yaml, line)) {
    if (line == "paths:") in_paths = true;
    else if (!line.empty() && line[0] != ' ' && line[0] != '#') in_paths = false;
    std::smatch m;
    if (!in_paths) continue;
    if (std::regex_match(line, m, path_line)) path = m[1];
    else if (std::regex_match(line, m, method_line)) {
      std::string method = m[1];
      for (char& c : method) c = static_cast<char>(std::toupper(static_cast<unsigned char>(c)));
      documented.insert(method + " " + path);
    }
  }
  for (const auto& r : served) EXPECT_TRUE(documented.count(r)) << r << " is served but not in docs/openapi.yaml";
  for (const auto& r : documented) EXPECT_TRUE(served.count(r)) << r << " is documented but not served";
}

TEST(Daemon, WritesNeedTheTokenAndAWrongTokenChangesNothing) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string token = token_of(dir.path());
  const std::string file = write_returns(dir, 80);
  const std::string upload = "-H 'Content-Type: text/csv' --data-binary @'" + file + "'";

  for (const std::string& auth : {std::string(), bearer("0123456789abcdef0123456789abcdef0123456789abcdef0123456789abcdef"),
                                  bearer(token.substr(0, 63) + "x"), std::string("-H 'Authorization: Basic abc'")}) {
    auto r = fw::curl(dir.path(), auth + " " + upload, daemon.url("/v1/returns"));
    EXPECT_EQ(r.status, 401) << auth;
    EXPECT_EQ(r.header("content-type"), "application/problem+json");
    EXPECT_EQ(r.header("www-authenticate"), "Bearer realm=\"factorwatch\"");
    EXPECT_EQ(json::parse(r.body)["field"], "Authorization");
    EXPECT_EQ(fw::curl(dir.path(), auth + " -X PUT -d '{}'", daemon.url("/v1/models/m")).status, 401);
    EXPECT_EQ(fw::curl(dir.path(), auth + " -X POST -d ''", daemon.url("/v1/models/m/refresh")).status, 401);
  }
  // Nothing changed: no assets, no models, no ingest run.
  EXPECT_EQ(json::parse(fw::curl(dir.path(), "", daemon.url("/v1/assets")).body)["assets"].size(), 0u);
  EXPECT_EQ(json::parse(fw::curl(dir.path(), "", daemon.url("/v1/models")).body)["models"].size(), 0u);

  // The right token (scheme name in any case, RFC 9110 section 11.1) writes.
  auto ok = fw::curl(dir.path(), "-H 'Authorization: bearer " + token + "' " + upload, daemon.url("/v1/returns"));
  EXPECT_EQ(ok.status, 200) << ok.body;
  EXPECT_EQ(json::parse(ok.body)["assets"], 40);
  EXPECT_EQ(json::parse(ok.body)["calendar"], "weekdays");
  EXPECT_EQ(json::parse(ok.body)["moved_forward"], true);
  EXPECT_TRUE(json::parse(ok.body)["latest_date_before"].is_null());
  // A file that declares a market trading on weekends stores its Saturday (1999-01-16).
  fw::write_text(dir.file("weekend.csv"), "# calendar: all days\ndate,ZQ-WKND\n1999-01-15,0.01\n1999-01-16,0.02\n");
  auto weekend = fw::curl(dir.path(), bearer(token) + " -H 'Content-Type: text/csv' --data-binary @'" +
                                          dir.file("weekend.csv") + "'", daemon.url("/v1/returns"));
  EXPECT_EQ(weekend.status, 200) << weekend.body;
  EXPECT_EQ(json::parse(weekend.body)["calendar"], "all days");
  EXPECT_EQ(json::parse(weekend.body)["last_date"], "1999-01-16");
  // Older history: two dates new to the database, none after its latest (the feed has not moved on).
  EXPECT_EQ(json::parse(weekend.body)["dates_new"], 2);
  EXPECT_EQ(json::parse(weekend.body)["moved_forward"], false);
  EXPECT_EQ(json::parse(weekend.body)["latest_date_before"], json::parse(ok.body)["last_date"]);

  // A renewed token takes effect without a restart; the old one stops working.
  const std::string renewed = fw::run_factorwatch(dir.path(), "token --renew").out.substr(0, 64);
  EXPECT_NE(renewed, token);
  EXPECT_EQ(fw::curl(dir.path(), bearer(token) + " -X PUT -d '{}'", daemon.url("/v1/models/m")).status, 401);
  EXPECT_EQ(fw::curl(dir.path(), bearer(renewed) + " -X PUT -d '{}'", daemon.url("/v1/models/m")).status, 201);
}

TEST(Daemon, ReadsNeedTheTokenWhenAskedButHealthDoesNot) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path(), "--reads-need-token");
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string token = token_of(dir.path());
  EXPECT_EQ(fw::curl(dir.path(), "", daemon.url("/v1/models")).status, 401);
  EXPECT_EQ(fw::curl(dir.path(), "", daemon.url("/v1/assets?format=csv")).status, 401);
  EXPECT_EQ(fw::curl(dir.path(), bearer(token), daemon.url("/v1/models")).status, 200);
  EXPECT_EQ(fw::curl(dir.path(), "", daemon.url("/v1/health")).status, 200);
  EXPECT_EQ(fw::curl(dir.path(), "", daemon.url("/v1/version")).status, 200);
}

// The same files the CLI rejects, with the same messages, and the database file and its
// write-ahead log byte for byte as they were.
TEST(Daemon, RejectedUploadsGiveTheLoadMessageAndLeaveTheDatabaseUnchanged) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string token = token_of(dir.path());
  load_and_fit(dir, daemon, token, 120, R"({"factors":2,"window":100,"step":5,"method":"pca"})");
  const std::string db_before = fw::read_bytes(dir.database()), wal_before = fw::read_bytes(dir.database() + "-wal");

  const std::string catalogue = FACTORWATCH_CATALOGUE_DIR;
  std::ifstream list(catalogue + "/catalogue.csv");
  std::string line;
  int checked = 0;
  while (std::getline(list, line)) {
    if (line.empty() || line[0] == '#' || line.rfind("file,", 0) == 0) continue;
    std::stringstream fields(line);
    std::string name, values;
    std::getline(fields, name, ',');
    std::getline(fields, values, ',');
    if (values != "returns") continue;
    const std::string path = catalogue + "/" + name;
    auto r = fw::curl(dir.path(), bearer(token) + " -H 'Content-Type: text/csv' --data-binary @'" + path + "'",
                      daemon.url("/v1/returns?file=" + name));
    ASSERT_EQ(r.status, 422) << name << ": " << r.body;
    EXPECT_EQ(r.header("content-type"), "application/problem+json");
    const json p = json::parse(r.body);
    EXPECT_EQ(p["database"], "unchanged");
    // `factorwatch load` on the same file (reached by the same name) prints the same message.
    const auto cli = fw::run_factorwatch(dir.path(), "load '" + path + "'");
    EXPECT_EQ(cli.status, 2) << name;
    const std::string detail = p["detail"];
    const std::string cli_message = detail.substr(detail.find(':'));  // the path differs: upload name vs file path
    EXPECT_NE(cli.err.find(cli_message), std::string::npos) << name << "\nHTTP: " << detail << "\nCLI:  " << cli.err;
    ++checked;
  }
  EXPECT_GE(checked, 30);
  EXPECT_EQ(fw::read_bytes(dir.database()), db_before);
  EXPECT_EQ(fw::read_bytes(dir.database() + "-wal"), wal_before);
}

TEST(Daemon, BodiesOverTheLimitAre413AndChangeNothing) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path(), "--max-upload-mb 1");
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string file = write_returns(dir, 1200);  // about 2.5 MB
  auto r = fw::curl(dir.path(), bearer(token_of(dir.path())) + " -H 'Content-Type: text/csv' --data-binary @'" + file + "'",
                    daemon.url("/v1/returns"));
  EXPECT_EQ(r.status, 413);
  EXPECT_EQ(r.header("content-type"), "application/problem+json");
  EXPECT_EQ(json::parse(fw::curl(dir.path(), "", daemon.url("/v1/assets")).body)["assets"].size(), 0u);
}

// The daemon's CSV is the CLI's CSV byte for byte; the caution rides in a header and in
// the first line; JSON carries it as its first member.
TEST(Daemon, CsvAndJsonMatchTheCommandLineAndCarryTheCaution) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  load_and_fit(dir, daemon, token_of(dir.path()), 150, R"({"factors":2,"window":120,"step":10,"method":"ml"})");
  const std::string caution = factorwatch::engine::kCaution;
  for (const std::string what : {"exposures", "specific-risk", "windows"}) {
    const auto csv = fw::curl(dir.path(), "", daemon.url("/v1/models/m/" + what + "?format=csv"));
    ASSERT_EQ(csv.status, 200) << csv.body;
    EXPECT_EQ(csv.header("content-type"), "text/csv; charset=utf-8");
    EXPECT_EQ(csv.header("factorwatch-caution"), caution);
    EXPECT_EQ(csv.body.rfind("# caution: " + caution + "\n", 0), 0u);
    EXPECT_EQ(csv.body, fw::run_factorwatch(dir.path(), what + " m --format csv").out) << what;
    // Accept: text/csv asks for the same.
    EXPECT_EQ(fw::curl(dir.path(), "-H 'Accept: text/csv'", daemon.url("/v1/models/m/" + what)).body, csv.body);
    const auto js = fw::curl(dir.path(), "", daemon.url("/v1/models/m/" + what));
    EXPECT_EQ(js.header("content-type"), "application/json");
    const json j = json::parse(js.body);
    EXPECT_EQ(nlohmann::ordered_json::parse(js.body).begin().key(), "caution");
    EXPECT_EQ(j["caution"], caution);
    EXPECT_EQ(j, json::parse(fw::run_factorwatch(dir.path(), what + " m --format json").out)) << what;
  }
  // A list of assets, in the order given, with a reason for the ones not in the window.
  const json some = json::parse(fw::curl(dir.path(), "", daemon.url("/v1/models/m/exposures?assets=P1003,P1001,NOPE")).body);
  ASSERT_EQ(some["assets"].size(), 2u);
  EXPECT_EQ(some["assets"][0]["asset"], "P1003");
  EXPECT_EQ(some["not_in_window"][0]["asset"], "NOPE");
  // An earlier as-of date gives the window at or before it, and says so.
  const json windows = json::parse(fw::curl(dir.path(), "", daemon.url("/v1/models/m/windows")).body)["windows"];
  ASSERT_GE(windows.size(), 3u);
  const json older = json::parse(
      fw::curl(dir.path(), "", daemon.url("/v1/models/m/exposures?as_of=" + windows[1]["as_of"].get<std::string>())).body);
  EXPECT_EQ(older["as_of"], windows[1]["as_of"]);
}

// A whole window to a client that accepts gzip (RFC 9110 section 12.5.3): compressed once,
// labelled once, and the same bytes as the plain body once decompressed.
TEST(Daemon, LargeBodiesAreGzippedForClientsThatAcceptIt) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  load_and_fit(dir, daemon, token_of(dir.path()), 130, R"({"factors":3,"window":120,"step":10,"method":"pca"})", 600);
  for (const std::string query : {"?format=csv", ""}) {
    const std::string url = daemon.url("/v1/models/m/exposures" + query);
    const auto plain = fw::curl(dir.path(), "", url);
    ASSERT_EQ(plain.status, 200);
    ASSERT_GT(plain.body.size(), 64u << 10) << "the window must be large enough to be compressed";
    EXPECT_EQ(plain.header("content-encoding"), "");
    const auto packed = fw::curl(dir.path(), "-H 'Accept-Encoding: gzip'", url);
    EXPECT_EQ(packed.header("content-encoding"), "gzip");
    ASSERT_GE(packed.body.size(), 2u);
    EXPECT_EQ(static_cast<unsigned char>(packed.body[0]), 0x1f);  // the gzip magic (RFC 1952)
    EXPECT_EQ(static_cast<unsigned char>(packed.body[1]), 0x8b);
    EXPECT_LT(packed.body.size(), plain.body.size() / 2);
    // curl asks for every coding it knows and decodes what comes back.
    const auto decoded = fw::curl(dir.path(), "--compressed", url);
    EXPECT_EQ(decoded.body, plain.body);
    EXPECT_EQ(decoded.header("content-encoding"), "gzip");
    // gzip;q=0 refuses it.
    EXPECT_EQ(fw::curl(dir.path(), "-H 'Accept-Encoding: gzip;q=0'", url).body, plain.body);
  }
}

TEST(Daemon, ErrorsAreProblemDetailsNamingTheField) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string token = token_of(dir.path());
  load_and_fit(dir, daemon, token, 120, R"({"factors":2,"window":100,"step":20,"method":"pca"})");
  struct Case {
    std::string arguments, path;
    int status;
    std::string field;
  };
  const std::vector<Case> cases = {
      {"", "/v1/models/m/exposures?as_of=2021-02-30", 400, "as_of"},
      {"", "/v1/models/m/exposures?format=xml", 400, "format"},
      {"", "/v1/models/nope/exposures", 404, "name"},
      {"", "/v1/models/m/exposures?as_of=1999-01-01", 404, "as_of"},
      {"", "/v1/jobs/77", 404, "id"},
      {"", "/v1/nothing-here", 404, ""},
      {"-X PATCH", "/v1/models/m", 405, ""},
      {"-X DELETE", "/v1/models/m", 401, "Authorization"},
      {bearer(token) + " -X DELETE", "/v1/models/nope", 404, "name"},
      {bearer(token) + " -d '{\"name\":\"bad name\"}'", "/v1/models/m/rename", 400, "name"},
      {bearer(token) + " -d '{\"nom\":\"x\"}'", "/v1/models/m/rename", 400, "nom"},
      {bearer(token) + " -X PUT -d '{\"factors\":\"two\"}'", "/v1/models/m", 400, "factors"},
      {bearer(token) + " -X PUT -d '{\"min_coverage\":3}'", "/v1/models/m", 400, "min_coverage"},
      {bearer(token) + " -X PUT -d '{\"colour\":1}'", "/v1/models/m", 400, "colour"},
      {bearer(token) + " -X PUT -d 'not json'", "/v1/models/m", 400, "body"},
      {bearer(token) + " --data-binary @'" + write_returns(dir, 300, "form.csv") + "'", "/v1/returns", 413,
       "Content-Type"},
      {bearer(token) + " --data-binary x", "/v1/returns?prices=maybe", 400, "prices"},
  };
  for (const Case& c : cases) {
    const auto r = fw::curl(dir.path(), c.arguments, daemon.url(c.path));
    EXPECT_EQ(r.status, c.status) << c.path << " " << r.body;
    EXPECT_EQ(r.header("content-type"), "application/problem+json") << c.path;
    const json p = json::parse(r.body);
    EXPECT_EQ(p["status"], c.status);
    EXPECT_EQ(p["type"], "about:blank");
    EXPECT_FALSE(p["detail"].get<std::string>().empty());
    if (!c.field.empty()) {
      EXPECT_EQ(p["field"], c.field) << c.path << " " << r.body;
      EXPECT_NE(p["detail"].get<std::string>().find(c.field), std::string::npos) << r.body;
    }
  }
}

// Health counts the models behind the stored returns, and names them to the token holder.
TEST(Daemon, HealthCountsTheModelsBehindTheData) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string token = token_of(dir.path());
  load_and_fit(dir, daemon, token, 120, R"({"factors":2,"window":100,"step":20,"method":"pca"})");
  json health = json::parse(fw::curl(dir.path(), "", daemon.url("/v1/health")).body);
  EXPECT_EQ(health["models_behind"], 0) << health.dump();
  const std::string more = write_returns(dir, 140, "more.csv");  // 20 dates more: a window to fit
  ASSERT_EQ(fw::curl(dir.path(), bearer(token) + " -H 'Content-Type: text/csv' --data-binary @'" + more + "'",
                     daemon.url("/v1/returns")).status,
            200);
  health = json::parse(fw::curl(dir.path(), "", daemon.url("/v1/health")).body);
  EXPECT_EQ(health["models_behind"], 1) << health.dump();
  EXPECT_FALSE(health.contains("behind")) << health.dump();
  health = json::parse(fw::curl(dir.path(), bearer(token), daemon.url("/v1/health")).body);
  ASSERT_EQ(health["behind"].size(), 1u) << health.dump();
  EXPECT_EQ(health["behind"][0]["model"], "m");
  EXPECT_GE(health["behind"][0]["pending_windows"].get<int>(), 1);
  EXPECT_EQ(json::parse(fw::curl(dir.path(), "", daemon.url("/v1/models/m")).body)["behind"], true);
}

// A model's life over HTTP, with the token: prune the superseded version, rename (the
// cached exposures then carry the new name, never the old), delete; and none of the
// three while the model's refresh is queued or running (409 naming the job).
TEST(Daemon, ModelsArePrunedRenamedAndDeletedButNotUnderTheirRefresh) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string token = token_of(dir.path());
  load_and_fit(dir, daemon, token, 140, R"({"factors":2,"window":100,"step":20,"method":"pca"})");
  ASSERT_EQ(fw::curl(dir.path(), bearer(token) + " -X PUT -d '{\"factors\":3}'", daemon.url("/v1/models/m")).status, 200);
  ASSERT_EQ(fw::run_factorwatch(dir.path(), "refresh m").status, 0);
  EXPECT_EQ(json::parse(fw::curl(dir.path(), "", daemon.url("/v1/models/m/exposures")).body)["model"], "m");

  auto r = fw::curl(dir.path(), bearer(token) + " -d ''", daemon.url("/v1/models/m/prune"));
  ASSERT_EQ(r.status, 200) << r.body;
  EXPECT_EQ(json::parse(r.body), json::parse(R"({"model":"m","versions_deleted":1,"windows_deleted":3,"version_kept":2})"));

  r = fw::curl(dir.path(), bearer(token) + " -d '{\"name\":\"m2\"}'", daemon.url("/v1/models/m/rename"));
  ASSERT_EQ(r.status, 200) << r.body;
  EXPECT_EQ(json::parse(r.body), json::parse(R"({"model":"m2","renamed_from":"m"})"));
  r = fw::curl(dir.path(), "", daemon.url("/v1/models/m2/exposures"));
  ASSERT_EQ(r.status, 200) << r.body;
  EXPECT_EQ(json::parse(r.body)["model"], "m2");
  EXPECT_EQ(fw::curl(dir.path(), "", daemon.url("/v1/models/m/exposures")).status, 404);

  // A long refresh of another model: while it runs, that model is not deleted, pruned or renamed.
  const std::string more = write_returns(dir, 700, "more.csv");
  ASSERT_EQ(fw::curl(dir.path(), bearer(token) + " -H 'Content-Type: text/csv' --data-binary @'" + more + "'",
                     daemon.url("/v1/returns")).status,
            200);
  ASSERT_EQ(fw::curl(dir.path(), bearer(token) + " -X PUT -d '{\"factors\":2,\"window\":100,\"step\":1,\"method\":\"ml\"}'",
                     daemon.url("/v1/models/busy")).status,
            201);
  ASSERT_EQ(fw::curl(dir.path(), bearer(token) + " -d ''", daemon.url("/v1/models/busy/refresh")).status, 202);
  r = fw::curl(dir.path(), bearer(token) + " -X DELETE", daemon.url("/v1/models/busy"));
  EXPECT_EQ(r.status, 409) << r.body;
  EXPECT_NE(json::parse(r.body)["detail"].get<std::string>().find("while its refresh (job 1) is queued or running"),
            std::string::npos)
      << r.body;
  EXPECT_EQ(fw::curl(dir.path(), bearer(token) + " -d '{\"name\":\"idle\"}'", daemon.url("/v1/models/busy/rename")).status,
            409);
  EXPECT_EQ(json::parse(fw::curl(dir.path(), "", daemon.url("/v1/jobs/1")).body)["state"] != "finished", true)
      << "the refresh finished before the requests: make it longer";
  // A taken name is a conflict too.
  EXPECT_EQ(fw::curl(dir.path(), bearer(token) + " -d '{\"name\":\"busy\"}'", daemon.url("/v1/models/m2/rename")).status,
            409);

  r = fw::curl(dir.path(), bearer(token) + " -X DELETE", daemon.url("/v1/models/m2"));
  ASSERT_EQ(r.status, 200) << r.body;
  EXPECT_EQ(json::parse(r.body), json::parse(R"({"model":"m2","versions_deleted":1,"windows_deleted":3})"));
  EXPECT_EQ(fw::curl(dir.path(), "", daemon.url("/v1/models/m2")).status, 404);
  EXPECT_EQ(fw::curl(dir.path(), "", daemon.url("/v1/models/m2/exposures")).status, 404);
}

// Readers never wait for the refresh: while a background refresh writes window after
// window, parallel clients read exposures and the window list, all answered in full.
TEST(Daemon, ReadsAreAnsweredWhileARefreshRuns) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string token = token_of(dir.path());
  load_and_fit(dir, daemon, token, 140, R"({"factors":2,"window":100,"step":20,"method":"pca"})");
  const std::string more = write_returns(dir, 700, "more.csv");
  ASSERT_EQ(fw::curl(dir.path(), bearer(token) + " -H 'Content-Type: text/csv' --data-binary @'" + more + "'", daemon.url("/v1/returns")).status, 200);
  ASSERT_EQ(fw::curl(dir.path(), bearer(token) + " -X PUT -d '{\"factors\":2,\"window\":100,\"step\":1,\"method\":\"ml\"}'",
                     daemon.url("/v1/models/busy")).status,
            201);
  const auto started = fw::curl(dir.path(), bearer(token) + " -X POST -d ''", daemon.url("/v1/models/busy/refresh"));
  ASSERT_EQ(started.status, 202) << started.body;
  const std::string job_path = started.header("location");
  ASSERT_EQ(job_path.rfind("/v1/jobs/", 0), 0u);

  std::atomic<int> answered{0}, wrong{0}, during{0};
  auto reader = [&](int seed) {
    for (int i = 0; i < 15; ++i) {
      const json job = json::parse(fw::curl(dir.path(), "", daemon.url(job_path)).body);
      if (job["state"] == "running") during++;
      const bool csv = (i + seed) % 2 == 0;
      const auto r = fw::curl(dir.path(), "", daemon.url(std::string("/v1/models/m/exposures") + (csv ? "?format=csv" : "")));
      const bool complete = r.status == 200 && (csv ? r.body.find("\nP1039,") != std::string::npos
                                                    : json::parse(r.body)["assets"].size() == 40u);
      (complete ? answered : wrong)++;
      const auto w = fw::curl(dir.path(), "", daemon.url("/v1/models/busy/windows"));
      (w.status == 200 ? answered : wrong)++;
    }
  };
  std::vector<std::thread> readers;
  for (int t = 0; t < 4; ++t) readers.emplace_back(reader, t);
  for (auto& t : readers) t.join();
  EXPECT_EQ(wrong, 0);
  EXPECT_EQ(answered, 4 * 15 * 2);
  EXPECT_GT(during, 0) << "the refresh finished before the reads: make it longer";

  // Submitting again while it runs returns the same job; then it finishes.
  json job;
  const auto deadline = std::chrono::steady_clock::now() + std::chrono::seconds(120);
  do {
    std::this_thread::sleep_for(std::chrono::milliseconds(200));
    job = json::parse(fw::curl(dir.path(), "", daemon.url(job_path)).body);
  } while (job["state"] == "running" && std::chrono::steady_clock::now() < deadline);
  EXPECT_EQ(job["state"], "finished") << job.dump();
  EXPECT_EQ(job["summary"]["fitted"], job["progress"]["total"]);
  EXPECT_EQ(json::parse(fw::curl(dir.path(), "", daemon.url("/v1/models/busy/windows")).body)["windows"].size(),
            job["summary"]["grid_windows"].get<std::size_t>());
}

// SIGTERM during a refresh: the daemon exits 0, the window being fitted is written whole,
// and a later refresh carries on from the windows stored.
TEST(Daemon, StopsCleanlyDuringARefresh) {
  fw::TempDir dir;
  auto daemon = std::make_unique<fw::DaemonProcess>(dir.path());
  ASSERT_TRUE(daemon->ready()) << daemon->log();
  const std::string token = token_of(dir.path());
  const std::string file = write_returns(dir, 800);
  ASSERT_EQ(fw::curl(dir.path(), bearer(token) + " -H 'Content-Type: text/csv' --data-binary @'" + file + "'", daemon->url("/v1/returns")).status, 200);
  ASSERT_EQ(fw::curl(dir.path(), bearer(token) + " -X PUT -d '{\"factors\":2,\"window\":100,\"step\":1,\"method\":\"ml\"}'",
                     daemon->url("/v1/models/m")).status,
            201);
  ASSERT_EQ(fw::curl(dir.path(), bearer(token) + " -X POST -d ''", daemon->url("/v1/models/m/refresh")).status, 202);
  json job;
  for (int i = 0; i < 200; ++i) {
    job = json::parse(fw::curl(dir.path(), "", daemon->url("/v1/jobs/1")).body);
    if (job["progress"]["done"].get<int>() >= 5) break;
    std::this_thread::sleep_for(std::chrono::milliseconds(20));
  }
  ASSERT_EQ(job["state"], "running") << job.dump();
  EXPECT_EQ(daemon->stop(), 0) << daemon->log();
  EXPECT_NE(daemon->log().find("SIGTERM: stopping"), std::string::npos);

  const auto windows = json::parse(fw::run_factorwatch(dir.path(), "windows m --format json").out)["windows"];
  const std::size_t stored = windows.size();
  EXPECT_GT(stored, 0u);
  EXPECT_LT(stored, 701u);
  const auto resumed = fw::run_factorwatch(dir.path(), "refresh m");
  ASSERT_EQ(resumed.status, 0) << resumed.err;
  EXPECT_NE(resumed.out.find(std::to_string(stored) + " already current"), std::string::npos) << resumed.out;
  EXPECT_EQ(json::parse(fw::run_factorwatch(dir.path(), "windows m --format json").out)["windows"].size(), 701u);
}

// The stdlib-only Python example: upload, define, refresh, print the exposure table.
TEST(Daemon, PythonExampleUploadsRefreshesAndPrintsExposures) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string file = write_returns(dir, 130);
  const std::string command = "python3 '" + std::string(FACTORWATCH_SOURCE_DIR) +
                              "/docs/examples/refresh_and_show.py' --url " + daemon.url("") + " --token-file '" +
                              dir.file("access-token") + "' --model ex --file '" + file +
                              "' --factors 2 --window 120 --limit 0 2>&1";
  std::string out;
  FILE* pipe = ::popen(command.c_str(), "r");
  ASSERT_NE(pipe, nullptr);
  char buffer[4096];
  std::size_t n = 0;
  while ((n = std::fread(buffer, 1, sizeof buffer, pipe)) > 0) out.append(buffer, n);
  const int status = ::pclose(pipe);
  ASSERT_TRUE(WIFEXITED(status));
  EXPECT_EQ(WEXITSTATUS(status), 0) << out;
  EXPECT_NE(out.find(factorwatch::engine::kCaution), std::string::npos) << out;
  for (int i = 0; i < 40; ++i) EXPECT_NE(out.find("P" + std::to_string(1000 + i)), std::string::npos) << out;
  // What it printed is the model the daemon stored: the CLI sees the same window.
  const json stored = json::parse(fw::run_factorwatch(dir.path(), "exposures ex --format json").out);
  EXPECT_EQ(stored["assets"].size(), 40u);
  EXPECT_NE(out.find(stored["as_of"].get<std::string>()), std::string::npos) << out;
}

}  // namespace

// The rotation, alignment and alert members of PUT /v1/models/{name} round-trip through
// GET and the CLI's `model show`; bad values are problems naming the member.
TEST(Daemon, ModelAlignmentOptionsRoundTripThroughPutAndShow) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string token = token_of(dir.path());
  const std::string definition =
      R"({"factors":2,"window":60,"step":10,"method":"pca","rotation":"promax","kaiser_normalize":false,)"
      R"("align_to":"pinned","pinned_window":"2021-04-01","smoothing_half_life":7.5,"min_shared_assets":30,)"
      R"("alert_below":0.9,"alert_below_pinned":0.85,"tolerance":1e-10})";
  auto put = fw::curl(dir.path(), bearer(token) + " -X PUT -d '" + definition + "'", daemon.url("/v1/models/m"));
  ASSERT_EQ(put.status, 201) << put.body;
  const json shown = json::parse(fw::curl(dir.path(), "", daemon.url("/v1/models/m")).body)["configuration"];
  EXPECT_EQ(shown["rotation"], "promax");
  EXPECT_EQ(shown["kaiser_normalize"], false);
  EXPECT_EQ(shown["align_to"], "pinned");
  EXPECT_EQ(shown["pinned_window"], "2021-04-01");
  EXPECT_EQ(shown["smoothing_half_life"], 7.5);
  EXPECT_EQ(shown["min_shared_assets"], 30);
  EXPECT_EQ(shown["alert_below"], 0.9);
  EXPECT_EQ(shown["alert_below_pinned"], 0.85);
  EXPECT_EQ(shown["tolerance"], 1e-10);
  EXPECT_NE(fw::run_factorwatch(dir.path(), "model show m").out.find("tolerance:     1e-10"), std::string::npos);
  // The command line reads the same configuration.
  EXPECT_EQ(json::parse(fw::run_factorwatch(dir.path(), "model show m --format json").out)["configuration"], shown);
  // null pins the first window again; members left out keep their values.
  put = fw::curl(dir.path(), bearer(token) + " -X PUT -d '{\"pinned_window\":null,\"rotation\":\"varimax\"}'",
                 daemon.url("/v1/models/m"));
  ASSERT_EQ(put.status, 200) << put.body;
  const json changed = json::parse(put.body);
  EXPECT_EQ(changed["version"], 2);
  EXPECT_EQ(changed["configuration"]["pinned_window"], "");
  EXPECT_EQ(changed["configuration"]["rotation"], "varimax");
  EXPECT_EQ(changed["configuration"]["align_to"], "pinned");
  EXPECT_NE(fw::run_factorwatch(dir.path(), "model show m").out.find("pinned window: the first window"), std::string::npos);

  for (const auto& [body, member] : std::vector<std::pair<std::string, std::string>>{
           {R"({"rotation":"sideways"})", "rotation"},
           {R"({"kaiser_normalize":"yes"})", "kaiser_normalize"},
           {R"({"align_to":3})", "align_to"},
           {R"({"pinned_window":"2021-02-30"})", "pinned_window"},
           {R"({"pinned_window":5})", "pinned_window"},
           {R"({"smoothing_half_life":0})", "smoothing_half_life"},
           {R"({"min_shared_assets":1.5})", "min_shared_assets"},
           {R"({"alert_below":2})", "alert_below"},
           {R"({"alert_below_pinned":"off"})", "alert_below_pinned"},
           {R"({"tolerance":0})", "tolerance"},
           {R"({"tolerance":0.5})", "tolerance"},
           {R"({"tolerance":"tight"})", "tolerance"}}) {
    const auto r = fw::curl(dir.path(), bearer(token) + " -X PUT -d '" + body + "'", daemon.url("/v1/models/m"));
    EXPECT_EQ(r.status, 400) << body << " " << r.body;
    const json p = json::parse(r.body);
    EXPECT_EQ(p["field"], member) << body << " " << r.body;
    EXPECT_NE(p["detail"].get<std::string>().find("member '" + member + "'"), std::string::npos) << r.body;
  }
  const auto unknown = fw::curl(dir.path(), bearer(token) + " -X PUT -d '{\"colour\":1}'", daemon.url("/v1/models/m"));
  EXPECT_NE(json::parse(unknown.body)["detail"].get<std::string>().find("alert_below_pinned"), std::string::npos);
  EXPECT_EQ(json::parse(fw::curl(dir.path(), "", daemon.url("/v1/models/m")).body)["version"], 2);
}

// Drift, history and alerts: the daemon's CSV is the CLI's byte for byte and its JSON the
// CLI's; the caution in the header, the first line and the first member. A refresh run as
// a job reports the alignment pass. The thresholds are set high (0.999) so that the
// sampling noise between windows of this planted model (invented data) raises alerts.
TEST(Daemon, DriftHistoryAndAlertsMatchTheCommandLine) {
  fw::TempDir dir;
  fw::DaemonProcess daemon(dir.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const std::string token = token_of(dir.path());
  load_and_fit(dir, daemon, token, 200,
               R"({"factors":2,"window":60,"step":10,"method":"pca","rotation":"varimax","alert_below":0.999,)"
               R"("alert_below_pinned":0.99})");
  const json windows = json::parse(fw::curl(dir.path(), "", daemon.url("/v1/models/m/windows")).body)["windows"];
  ASSERT_EQ(windows.size(), 15u);  // (200 - 60) / 10 + 1
  EXPECT_EQ(windows[1]["alignment"], "aligned");
  const std::string w5 = windows[5]["as_of"], w9 = windows[9]["as_of"];
  const std::string caution = factorwatch::engine::kCaution;
  struct Pair {
    std::string query, command;
  };
  const std::vector<Pair> pairs = {
      {"/v1/models/m/drift", "drift m"},
      {"/v1/models/m/drift?against=pinned&from=" + w5 + "&to=" + w9, "drift m --against pinned --from " + w5 + " --to " + w9},
      {"/v1/models/m/drift?window=" + w9, "drift m --window " + w9},
      {"/v1/models/m/drift?window=" + w9 + "&against=pinned", "drift m --window " + w9 + " --against pinned"},
      {"/v1/models/m/history?asset=P1003", "history m P1003"},
      {"/v1/models/m/history?asset=P1003&from=" + w5, "history m P1003 --from " + w5},
      {"/v1/models/m/alerts", "alerts m"},
      {"/v1/models/m/alerts?to=" + w9, "alerts m --to " + w9},
  };
  for (const Pair& p : pairs) {
    const std::string sep = p.query.find('?') == std::string::npos ? "?" : "&";
    const auto csv = fw::curl(dir.path(), "", daemon.url(p.query + sep + "format=csv"));
    ASSERT_EQ(csv.status, 200) << p.query << " " << csv.body;
    EXPECT_EQ(csv.header("content-type"), "text/csv; charset=utf-8");
    EXPECT_EQ(csv.header("factorwatch-caution"), caution);
    EXPECT_NE(csv.header("content-disposition").find(".csv\""), std::string::npos);
    EXPECT_EQ(csv.body.rfind("# caution: " + caution + "\n", 0), 0u);
    const auto cli_csv = fw::run_factorwatch(dir.path(), p.command + " --format csv");
    ASSERT_EQ(cli_csv.status, 0) << p.command << ": " << cli_csv.err;
    EXPECT_EQ(csv.body, cli_csv.out) << p.query;
    EXPECT_EQ(fw::curl(dir.path(), "-H 'Accept: text/csv'", daemon.url(p.query)).body, csv.body) << p.query;
    const auto js = fw::curl(dir.path(), "", daemon.url(p.query));
    ASSERT_EQ(js.status, 200) << p.query << " " << js.body;
    EXPECT_EQ(js.header("content-type"), "application/json");
    EXPECT_EQ(nlohmann::ordered_json::parse(js.body).begin().key(), "caution") << p.query;
    EXPECT_EQ(json::parse(js.body), json::parse(fw::run_factorwatch(dir.path(), p.command + " --format json").out))
        << p.query;
  }
  // Rows were there to compare: every window after the first against the previous and the
  // pinned window, and alerts at these thresholds.
  EXPECT_EQ(json::parse(fw::curl(dir.path(), "", daemon.url("/v1/models/m/drift")).body)["rows"].size(), 28u);
  EXPECT_FALSE(json::parse(fw::curl(dir.path(), "", daemon.url("/v1/models/m/alerts")).body)["alerts"].empty());

  // A refresh run as a job reports windows aligned, alerts raised and the alignment's time.
  auto put = fw::curl(dir.path(), bearer(token) + " -X PUT -d '{\"factors\":2,\"window\":60,\"step\":10,\"method\":\"pca\"}'",
                      daemon.url("/v1/models/job"));
  ASSERT_EQ(put.status, 201) << put.body;
  const auto started = fw::curl(dir.path(), bearer(token) + " -X POST -d ''", daemon.url("/v1/models/job/refresh"));
  ASSERT_EQ(started.status, 202) << started.body;
  json job;
  const auto deadline = std::chrono::steady_clock::now() + std::chrono::seconds(60);
  do {
    std::this_thread::sleep_for(std::chrono::milliseconds(100));
    job = json::parse(fw::curl(dir.path(), "", daemon.url(started.header("location"))).body);
  } while (job["state"] != "finished" && job["state"] != "failed" && std::chrono::steady_clock::now() < deadline);
  ASSERT_EQ(job["state"], "finished") << job.dump();
  EXPECT_EQ(job["summary"]["aligned"], 15);
  EXPECT_TRUE(job["summary"]["alerts"].is_number_integer());
  EXPECT_GE(job["summary"]["align_seconds"].get<double>(), 0.0);
}

