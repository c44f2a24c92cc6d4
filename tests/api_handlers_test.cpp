// The HTTP API's handlers in process (handler_fixture.h): the requests of the daemon's
// problem tests answered without a socket, and a hostile sweep of every read route with
// malformed query values. Returns are planted-structure data (invented, for tests).
#include <gtest/gtest.h>

#include <algorithm>
#include <fstream>
#include <limits>
#include <map>
#include <nlohmann/json.hpp>
#include <regex>
#include <set>
#include <string>
#include <vector>

#include "factorwatch/engine/caution.h"
#include "factorwatch/pipeline/refresh.h"
#include "factorwatch/storage/models.h"
#include "handler_fixture.h"
#include "routes.h"
#include "simulated_model.h"
#include "storage_fixtures.h"

namespace {

namespace fw = factorwatch::testing;
using nlohmann::json;

// `dates` business days of 40 assets from a 2-factor planted model, uploaded with the
// token, model m defined by `model_json`, and refreshed (synchronously).
void load_and_fit(fw::InProcessApi& api, const fw::TempDir& dir, int dates, const std::string& model_json) {
  auto planted = fw::simulate_planted_model(dates, 40, 2, 20261202u);
  planted.panel.dates = fw::business_dates(dates);
  fw::write_long_csv(dir.file("returns.csv"), planted.panel);
  const auto up = api.call("POST", "/v1/returns?file=returns.csv", fw::read_bytes(dir.file("returns.csv")), "text/csv");
  ASSERT_EQ(up.status, 200) << *up.body;
  const auto put = api.call("PUT", "/v1/models/m", model_json);
  ASSERT_EQ(put.status, 201) << *put.body;
  const auto summary = factorwatch::pipeline::refresh_model(api.context().database(), "m");
  ASSERT_GT(summary.fitted, 0u);
}

void expect_problem(const factorwatch::server::ApiResponse& r, int status, const std::string& field,
                    const std::string& what) {
  EXPECT_EQ(r.status, status) << what << " " << *r.body;
  EXPECT_EQ(r.content_type, "application/problem+json") << what;
  const json p = json::parse(*r.body);
  EXPECT_EQ(p["status"], status) << what;
  EXPECT_EQ(p["type"], "about:blank") << what;
  EXPECT_FALSE(p["detail"].get<std::string>().empty()) << what;
  if (!field.empty()) {
    EXPECT_EQ(p["field"], field) << what << " " << *r.body;
    EXPECT_NE(p["detail"].get<std::string>().find(field), std::string::npos) << what << " " << *r.body;
  }
}

// As Daemon.ErrorsAreProblemDetailsNamingTheField, for what the handlers decide (the
// daemon's glue answers 405 and the upload's Content-Type itself).
TEST(ApiHandlers, ErrorsAreProblemDetailsNamingTheField) {
  fw::TempDir dir;
  fw::InProcessApi api(dir.path());
  load_and_fit(api, dir, 120, R"({"factors":2,"window":100,"step":20,"method":"pca"})");
  struct Case {
    std::string method, target, body;
    int status;
    std::string field;
  };
  const std::vector<Case> cases = {
      {"GET", "/v1/models/m/exposures?as_of=2021-02-30", "", 400, "as_of"},
      {"GET", "/v1/models/m/exposures?format=xml", "", 400, "format"},
      {"GET", "/v1/models/nope/exposures", "", 404, "name"},
      {"GET", "/v1/models/m/exposures?as_of=1999-01-01", "", 404, "as_of"},
      {"GET", "/v1/jobs/77", "", 404, "id"},
      {"GET", "/v1/nothing-here", "", 404, ""},
      {"PUT", "/v1/models/m", R"({"factors":"two"})", 400, "factors"},
      {"PUT", "/v1/models/m", R"({"min_coverage":3})", 400, "min_coverage"},
      {"PUT", "/v1/models/m", R"({"colour":1})", 400, "colour"},
      {"PUT", "/v1/models/m", "not json", 400, "body"},
      {"POST", "/v1/returns?prices=maybe", "x", 400, "prices"},
  };
  for (const Case& c : cases)
    expect_problem(api.call(c.method, c.target, c.body, c.method == "POST" ? "text/csv" : ""), c.status, c.field,
                   c.target);
}

// Drift, history and alerts: every malformed or unknown input is a problem naming its
// field (moved here from the end-to-end daemon test, whose socket added nothing to it).
TEST(ApiHandlers, DriftHistoryAndAlertsProblemsNameTheField) {
  fw::TempDir dir;
  fw::InProcessApi api(dir.path());
  load_and_fit(api, dir, 120, R"({"factors":2,"window":60,"step":20,"method":"pca"})");
  const std::string first = json::parse(*api.call("GET", "/v1/models/m/windows").body)["windows"][0]["as_of"];
  struct Case {
    std::string target;
    int status;
    std::string field;
  };
  const std::vector<Case> cases = {
      {"/v1/models/m/drift?from=2021-02-30", 400, "from"},
      {"/v1/models/m/drift?to=tomorrow", 400, "to"},
      {"/v1/models/m/drift?from=2021-06-01&to=2021-05-01", 400, "to"},
      {"/v1/models/m/drift?against=sideways", 400, "against"},
      {"/v1/models/m/drift?window=" + first + "&against=both", 400, "against"},
      {"/v1/models/m/drift?window=2021-13-01", 400, "window"},
      {"/v1/models/m/drift?window=" + first + "&from=" + first, 400, "window"},
      {"/v1/models/m/drift?window=2019-01-01", 404, "window"},
      {"/v1/models/m/drift?window=" + first, 404, "window"},  // the first window: nothing before it
      {"/v1/models/m/drift?format=xml", 400, "format"},
      {"/v1/models/nope/drift", 404, "name"},
      {"/v1/models/m/history", 400, "asset"},
      {"/v1/models/m/history?asset=NOPE", 404, "asset"},
      {"/v1/models/m/history?asset=P1001&from=01/02/2021", 400, "from"},
      {"/v1/models/nope/history?asset=P1001", 404, "name"},
      {"/v1/models/m/alerts?to=2021-04-31", 400, "to"},
      {"/v1/models/nope/alerts", 404, "name"},
  };
  for (const Case& c : cases) expect_problem(api.call("GET", c.target), c.status, c.field, c.target);
  EXPECT_NE(api.call("GET", "/v1/models/m/history?asset=NOPE").body->find("'NOPE'"), std::string::npos);
}

// Every read route, with each query parameter it takes (its list in the route table; any
// other is refused before the handler runs) set to a value a hostile client might send:
// bytes that are not UTF-8, a NUL, an impossible, a future or a pre-data date, a huge or
// negative number, 100 000 characters; and a parameter name of such bytes. Each answer is
// a client error or a correct answer (never a 500), and its body is valid JSON or CSV
// text that a client can read (no raw invalid UTF-8 in JSON).
TEST(ApiHandlers, HostileQueryValuesNeverGiveAServerError) {
  fw::TempDir dir;
  fw::InProcessApi api(dir.path());
  load_and_fit(api, dir, 120, R"({"factors":2,"window":60,"step":20,"method":"pca"})");
  const std::vector<std::string> values = {"%FF%FE",     "%00",        "2021-02-30", "2999-12-31", "1900-01-01",
                                           "2021-01-02", "-1",         "1e400",      "99999999999999999999",
                                           std::string(100000, 'x'),   "",           "%C0%AE%C0%AE", "P1001%2C%FF"};
  std::size_t calls = 0;
  for (const auto& route : factorwatch::server::api_routes()) {
    if (std::string(route.method) != "GET") continue;
    std::string path = route.path;
    for (const auto& [placeholder, value] : {std::pair<std::string, std::string>{"{name}", "m"}, {"{id}", "1"}})
      if (const auto at = path.find(placeholder); at != std::string::npos) path.replace(at, placeholder.size(), value);
    const auto own = factorwatch::server::route_parameters(route);
    const bool negotiates = std::find(own.begin(), own.end(), "format") != own.end();
    std::vector<std::string> parameters = own;
    parameters.push_back("%FF%FE%00");  // a name no route takes: refused, named in printable form
    for (const std::string& parameter : parameters)
      for (const std::string& value : values) {
        for (const std::string& format : {std::string("json"), std::string("csv")}) {
          const std::string target =
              path + "?" + parameter + "=" + value + (parameter == "format" || !negotiates ? "" : "&format=" + format);
          const auto r = api.call("GET", target);
          ++calls;
          const std::string shown = target.substr(0, 120);
          ASSERT_TRUE(r.body) << shown;
          EXPECT_LT(r.status, 500) << shown << " " << r.body->substr(0, 300);
          if (r.content_type.rfind("application/", 0) == 0) {
            EXPECT_TRUE(json::accept(*r.body)) << shown;
          }
        }
      }
  }
  EXPECT_GT(calls, 1500u);  // (41 parameters of the GET routes + one unknown name on each of 19) x 13 values x 2
}

// A window whose fit failed is no model to answer with. Exposures, specific risk and risk
// serve the latest usable window before it and say which failed, why, and which is shown;
// only when no usable window is at or before the date asked for do they answer 409 naming
// the window's date (before, the latest window's failure was a 409 even with usable
// windows before it). Factor returns and residuals of a failed window named by its date
// do the same. Planted data: after date 80 only two of the 40 assets have returns; the
// model's calendar leaves those dates out until its lookback holds only them (from date
// 100), so the last window keeps two assets, too few for two factors by principal-axis.
TEST(ApiHandlers, AFailedWindowGivesWayToTheLatestUsableOneSayingWhy) {
  fw::TempDir dir;
  fw::InProcessApi api(dir.path());
  auto planted = fw::simulate_planted_model(120, 40, 2, 20261205u);
  planted.panel.dates = fw::business_dates(120);
  planted.panel.values.bottomRightCorner(40, 38).setConstant(std::numeric_limits<double>::quiet_NaN());
  fw::write_long_csv(dir.file("returns.csv"), planted.panel);
  ASSERT_EQ(api.call("POST", "/v1/returns?file=returns.csv", fw::read_bytes(dir.file("returns.csv")), "text/csv").status,
            200);
  ASSERT_EQ(api.call("PUT", "/v1/models/m", R"({"factors":2,"window":60,"step":20,"method":"principal-axis"})").status,
            201);
  const auto summary = factorwatch::pipeline::refresh_model(api.context().database(), "m");
  ASSERT_GT(summary.unusable, 0u);
  ASSERT_GT(summary.fitted, summary.unusable);
  const std::string last = planted.panel.dates.back().iso();
  const std::string usable = planted.panel.dates[79].iso();
  const std::string asset = planted.panel.assets.front();
  const std::string note_start = "the window as of " + last + " has no usable fit (";
  const std::string note_end = "; showing the latest usable window before it, as of " + usable;
  const auto exposures = api.call("GET", "/v1/models/m/exposures");
  ASSERT_EQ(exposures.status, 200) << *exposures.body;
  const json e = json::parse(*exposures.body);
  EXPECT_EQ(e["as_of"], usable);
  EXPECT_EQ(e["note"].get<std::string>().rfind(note_start, 0), 0u) << e["note"];
  EXPECT_NE(e["note"].get<std::string>().find(note_end), std::string::npos) << e["note"];
  const auto csv = api.call("GET", "/v1/models/m/specific-risk?format=csv&as_of=" + last);
  ASSERT_EQ(csv.status, 200) << *csv.body;
  EXPECT_NE(csv.body->find("window " + planted.panel.dates[20].iso() + " .. " + usable + "; note: " + note_start),
            std::string::npos)
      << csv.body->substr(0, 600);
  const std::string weights = R"({"weights":{")" + asset + R"(":1}})";
  const auto risk = api.call("POST", "/v1/models/m/risk", weights);
  ASSERT_EQ(risk.status, 200) << *risk.body;
  EXPECT_NE(json::parse(*risk.body)["note"].get<std::string>().find(note_end), std::string::npos) << *risk.body;
  // A failed window named by its date: the same, for factor returns and residuals too.
  for (const std::string& target : {"/v1/models/m/factor-returns?window=" + last,
                                   "/v1/models/m/residuals?asset=" + asset + "&window=" + last}) {
    const auto r = api.call("GET", target);
    ASSERT_EQ(r.status, 200) << target << " " << *r.body;
    EXPECT_EQ(json::parse(*r.body)["as_of"], usable) << target;
    EXPECT_NE(json::parse(*r.body)["note"].get<std::string>().find(note_end), std::string::npos) << target;
  }
  EXPECT_EQ(api.call("GET", "/v1/models/m/factor-returns").status, 200);
  // No usable window at all (every window of a model asking for 45 factors of 40 assets
  // fails): 409 naming the date.
  ASSERT_EQ(api.call("PUT", "/v1/models/many", R"({"factors":45,"window":60,"step":20,"method":"pca"})").status, 201);
  factorwatch::pipeline::refresh_model(api.context().database(), "many");
  expect_problem(api.call("GET", "/v1/models/many/exposures"), 409, "as_of", "exposures");
  expect_problem(api.call("GET", "/v1/models/many/specific-risk?format=csv"), 409, "as_of", "specific risk");
  expect_problem(api.call("POST", "/v1/models/many/risk", weights), 409, "as_of", "risk");
}

// Dates are read once, where they enter, by one rule with one message (engine::Date,
// pipeline::read_date): before, an as-of date was checked three ways on its way to SQL
// and a malformed one was described in four wordings. Every date a request can carry.
TEST(ApiHandlers, EveryDateParameterIsReadByOneRuleWithOneMessage) {
  fw::TempDir dir;
  fw::InProcessApi api(dir.path());
  load_and_fit(api, dir, 120, R"({"factors":2,"window":60,"step":20})");
  ASSERT_EQ(api.call("PUT", "/v1/portfolios/book?as_of=2021-03-31", "asset,weight\nP1000,1\n", "text/csv").status, 201);
  const std::string weights = R"({"weights":{"P1000":1}})";
  struct Case {
    std::string method, target, body, field;
  };
  for (const std::string bad : {"2024-02-30", "2023-02-29", "2024-13-01", "2024-1-05", "20240105", "yesterday",
                                "2024-01-05T00:00", "0000-01-01"}) {
    const std::vector<Case> cases = {
        {"GET", "/v1/models/m/exposures?as_of=" + bad, "", "as_of"},
        {"GET", "/v1/models/m/specific-risk?as_of=" + bad, "", "as_of"},
        {"POST", "/v1/models/m/risk?as_of=" + bad, weights, "as_of"},
        {"GET", "/v1/models/m/risk?portfolio=book&holdings_as_of=" + bad, "", "holdings_as_of"},
        {"GET", "/v1/models/m/drift?from=" + bad, "", "from"},
        {"GET", "/v1/models/m/drift?window=" + bad, "", "window"},
        {"GET", "/v1/models/m/alerts?to=" + bad, "", "to"},
        {"GET", "/v1/models/m/history?asset=P1000&from=" + bad, "", "from"},
        {"GET", "/v1/models/m/factor-returns?to=" + bad, "", "to"},
        {"GET", "/v1/models/m/factor-returns?window=" + bad, "", "window"},
        {"GET", "/v1/models/m/residuals?asset=P1000&window=" + bad, "", "window"},
        {"GET", "/v1/portfolios/book?as_of=" + bad, "", "as_of"},
        {"DELETE", "/v1/portfolios/book?as_of=" + bad, "", "as_of"},
    };
    for (const Case& c : cases) {
      const auto r = api.call(c.method, c.target, c.body);
      expect_problem(r, 400, c.field, c.target);
      EXPECT_EQ(json::parse(*r.body)["detail"],
                "query parameter '" + c.field + "' = '" + bad + "': not a date in the form yyyy-mm-dd")
          << c.target;
    }
    const auto body = api.call("POST", "/v1/models/m/risk", R"({"portfolio":"book","holdings_as_of":")" + bad + R"("})");
    expect_problem(body, 400, "holdings_as_of", "holdings_as_of in the body");
    EXPECT_EQ(json::parse(*body.body)["detail"],
              "member 'holdings_as_of' = '" + bad + "': not a date in the form yyyy-mm-dd");
  }
  // The portfolio was not removed by the refused deletes, and a real date still answers.
  EXPECT_EQ(api.call("GET", "/v1/portfolios/book?as_of=2021-03-31").status, 200);
  EXPECT_EQ(api.call("GET", "/v1/models/m/exposures?as_of=2099-12-31").status, 200);  // the latest before it
}

// A misspelt parameter was ignored: `exposures?asof=1998-06-30` served the latest window
// as if no date had been given. Every route now answers 400 for a parameter it does not
// read, naming it and listing the ones it takes; known ones still answer.
TEST(ApiHandlers, AQueryParameterTheRouteDoesNotReadIsA400NamingIt) {
  fw::TempDir dir;
  fw::InProcessApi api(dir.path());
  load_and_fit(api, dir, 120, R"({"factors":2,"window":60,"step":20})");
  const auto latest = json::parse(*api.call("GET", "/v1/models/m/exposures").body)["as_of"].get<std::string>();
  const auto misspelt = api.call("GET", "/v1/models/m/exposures?asof=2021-03-31");
  expect_problem(misspelt, 400, "asof", "asof");
  EXPECT_EQ(json::parse(*misspelt.body)["detail"],
            "query parameter 'asof' is not one this route takes (as_of, assets, format)");
  expect_problem(api.call("GET", "/v1/models/m?format=csv"), 400, "format", "a route without parameters");
  EXPECT_EQ(json::parse(*api.call("GET", "/v1/jobs?x=1").body)["detail"],
            "query parameter 'x': this route takes no query parameters");
  expect_problem(api.call("GET", "/v1/models/m/risk?portfolio=p&benchmrk=b"), 400, "benchmrk", "benchmrk");
  expect_problem(api.call("POST", "/v1/models/m/risk?portfolio=p", R"({"weights":{"P1000":1}})"), 400, "portfolio",
                 "a stored name belongs in the body of POST");
  expect_problem(api.call("PUT", "/v1/models/m?factors=3", R"({"factors":3})"), 400, "factors", "PUT member as a parameter");
  // Nothing was changed by the refused PUT: still version 1 with 2 factors.
  const json model = json::parse(*api.call("GET", "/v1/models/m").body);
  EXPECT_EQ(model["configuration"]["factors"], 2);
  // A parameter the route reads still works, with its own checks.
  EXPECT_EQ(api.call("GET", "/v1/models/m/exposures?as_of=" + latest + "&format=csv").status, 200);
  expect_problem(api.call("GET", "/v1/models/m/exposures?as_of=2021-02-30"), 400, "as_of", "bad date");
}

// Each route's parameters are the ones docs/openapi.yaml documents for it, and the other
// way round: the check above cannot refuse a documented parameter, nor let an
// undocumented one through.
TEST(ApiHandlers, EveryRoutesQueryParametersAreTheDocumentedOnes) {
  std::ifstream yaml(std::string(FACTORWATCH_SOURCE_DIR) + "/docs/openapi.yaml");
  ASSERT_TRUE(yaml.good());
  std::vector<std::string> lines;
  for (std::string line; std::getline(yaml, line);) lines.push_back(line);
  // components/parameters: their query names.
  std::map<std::string, std::string> component;
  const std::regex component_line(R"(^    ([A-Za-z]+):\s*$)"), name_line(R"(^\s+(?:- )?name: ([a-z_]+)\s*$)"),
      in_line(R"(^\s+in: (query|path|header)\s*$)"), ref_line(R"(^\s+- \$ref: '#/components/parameters/([A-Za-z]+)'\s*$)"),
      path_line(R"(^  (/v1[^:\s]*):\s*$)"), method_line(R"(^    (get|put|post|delete):\s*$)");
  bool in_components = false;
  std::string current, pending_name;
  for (const std::string& line : lines) {
    std::smatch m;
    if (line == "  parameters:") in_components = true;
    else if (in_components && !line.empty() && line[0] != ' ') in_components = false;
    if (!in_components) continue;
    if (std::regex_match(line, m, component_line)) current = m[1];
    else if (std::regex_match(line, m, name_line)) pending_name = m[1];
    else if (std::regex_match(line, m, in_line) && m[1] == "query" && !current.empty()) component[current] = pending_name;
  }
  ASSERT_EQ(component.at("AsOf"), "as_of");
  std::map<std::string, std::set<std::string>> documented;
  std::string path, operation, name;
  bool in_paths = false;
  for (const std::string& line : lines) {
    std::smatch m;
    if (line == "paths:") in_paths = true;
    else if (!line.empty() && line[0] != ' ' && line[0] != '#') in_paths = false;
    if (!in_paths) continue;
    if (std::regex_match(line, m, path_line)) path = m[1], operation.clear();
    else if (std::regex_match(line, m, method_line)) {
      std::string method = m[1];
      for (char& c : method) c = static_cast<char>(std::toupper(static_cast<unsigned char>(c)));
      operation = method + " " + path;
      documented[operation];
    } else if (operation.empty()) {
      continue;
    } else if (std::regex_match(line, m, ref_line)) {
      if (component.count(m[1])) documented[operation].insert(component[m[1]]);
    } else if (std::regex_match(line, m, name_line)) {
      name = m[1];
    } else if (std::regex_match(line, m, in_line) && m[1] == "query") {
      documented[operation].insert(name);
    }
  }
  for (const factorwatch::server::Route& r : factorwatch::server::api_routes()) {
    const std::string operation = std::string(r.method) + " " + r.path;
    const auto names = factorwatch::server::route_parameters(r);
    EXPECT_EQ(std::set<std::string>(names.begin(), names.end()), documented[operation]) << operation;
  }
}

}  // namespace
