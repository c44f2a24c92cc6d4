#include "risk_endpoints.h"

#include <cmath>
#include <unordered_set>

#include "endpoint_helpers.h"
#include "factorwatch/storage/identifier_rule.h"
#include "factorwatch/storage/portfolios.h"
#include "json_body.h"
#include "risk_model_cache.h"
#include "risk_query.h"
#include "risk_view.h"
#include "text_format.h"

namespace factorwatch::server {
namespace {

using nlohmann::ordered_json;

// How the HTTP API names each input a failure is about.
std::string http_field(const std::string& field) {
  if (field == "model") return "name";
  if (field == "portfolio_as_of") return "holdings_as_of";
  return field;
}

// Where the input came from: the window's date is always in the query string; the rest is
// in the query string of a GET and in the body of a POST.
std::string where(const ApiRequest& r, const std::string& field) {
  return (field == "as_of" || r.method != "POST" ? "query parameter '" : "member '") + field + "'";
}

// The window's risk model from the daemon's cache, read and indexed on a miss.
std::shared_ptr<const WindowRiskModel> cached_model(const ApiContext& context, storage::Database& db,
                                                    const WindowPick& pick) {
  if (pick.outcome != WindowLookup::found) return nullptr;
  const std::string key = std::to_string(pick.model.id) + "|" + pick.stamp.key();
  if (context.risk_models)
    if (auto model = context.risk_models->find(key)) return model;
  auto model = load_window_risk_model(db, pick);
  if (context.risk_models) context.risk_models->put(key, model);
  return model;
}

ApiResponse answer(const ApiContext& context, const ApiRequest& r, const RiskRequest& q) {
  const auto format = negotiate_format(r);
  if (const auto* p = std::get_if<ApiResponse>(&format)) return *p;
  const auto by_asset = r.parameter("by_asset") ? flag_parameter(r, "by_asset") : std::variant<bool, ApiResponse>(true);
  if (const auto* p = std::get_if<ApiResponse>(&by_asset)) return *p;

  storage::Database& db = context.database();
  const WindowPick pick = pick_window(db, q.window);
  const RiskOutcome outcome = answer_risk(db, q, pick, cached_model(context, db, pick));
  const std::string field = http_field(outcome.field);
  switch (outcome.failure) {
    case RiskFailure::none: break;
    case RiskFailure::no_model: return unknown_model(r, q.window.model);
    case RiskFailure::bad_as_of: return problem(400, where(r, field) + ": " + outcome.message, r.path, field);
    case RiskFailure::no_window:
      return problem(404, outcome.message + "; start one with POST /v1/models/" + q.window.model + "/refresh", r.path,
                     q.window.as_of.empty() ? "" : "as_of");
    case RiskFailure::unusable_window: return problem(409, outcome.message, r.path, "as_of");
    case RiskFailure::no_portfolio:
    case RiskFailure::no_benchmark:
      return problem(404, where(r, field) + ": " + outcome.message + " (GET /v1/portfolios lists them)", r.path, field);
    case RiskFailure::bad_weights: return problem(422, where(r, field) + ": " + outcome.message, r.path, field);
  }
  const RiskViewOptions view{std::get<bool>(by_asset), 0};
  if (std::get<Format>(format) == Format::csv) {
    const std::string name = q.portfolio.empty() ? "weights" : q.portfolio;
    return csv_response(std::make_shared<const std::string>(risk_csv(outcome.report, view)),
                        q.window.model + "-risk-" + name + "-" + outcome.report.window->as_of + ".csv", true);
  }
  return json_response(risk_json(outcome.report, view));
}

// Weights in a request: {"ASSET": weight, ...} or [{"asset": "ASSET", "weight": w}, ...].
// The error names the member and, inside it, the asset or the element.
std::variant<engine::Holdings, std::string> holdings_member(const ordered_json& value, const std::string& member) {
  engine::Holdings holdings;
  std::unordered_set<std::string> seen;
  // The rules of a holdings file: one identifier rule, one weight bound (storage).
  auto add = [&](const std::string& asset, const ordered_json& weight, const std::string& where) -> std::string {
    if (auto problem = storage::identifier_problem(asset))
      return "member '" + member + "'" + where + ": the asset name " + *problem;
    const std::string shown = "'" + storage::printable_text(asset) + "'";
    if (!weight.is_number()) return "member '" + member + "'" + where + ": the weight of " + shown + " must be a number";
    const double w = weight.get<double>();
    if (const std::string problem = storage::weight_problem(w); !problem.empty())
      return "member '" + member + "'" + where + ": the weight of " + shown + " " + problem;
    if (!seen.insert(asset).second) return "member '" + member + "': asset " + shown + " appears twice";
    holdings.push_back({asset, w});
    return "";
  };
  if (value.is_object()) {
    for (const auto& [asset, weight] : value.items())
      if (auto error = add(asset, weight, ""); !error.empty()) return error;
  } else if (value.is_array()) {
    std::size_t n = 0;
    for (const auto& element : value) {
      const std::string where = "[" + std::to_string(n++) + "]";
      if (!element.is_object() || !element.contains("asset") || !element["asset"].is_string() ||
          !element.contains("weight") || element.size() != 2)
        return "member '" + member + "'" + where + ": must be {\"asset\": NAME, \"weight\": NUMBER}";
      if (auto error = add(element["asset"].get<std::string>(), element["weight"], where); !error.empty()) return error;
    }
  } else {
    return "member '" + member + "': must be an object {\"ASSET\": weight, ...} or an array of {\"asset\", \"weight\"}";
  }
  if (holdings.empty()) return "member '" + member + "': no holdings (a file without holdings is refused too)";
  return holdings;
}

// "ASSET:CHANGE,ASSET:CHANGE" in a query string (the last ':' splits, so names may hold one).
std::variant<engine::Holdings, std::string> trade_parameter(const std::string& text) {
  ordered_json changes = ordered_json::array();
  for (const std::string& item : split_list(text)) {
    const auto colon = item.rfind(':');
    if (colon == std::string::npos)
      return "query parameter 'trade': '" + storage::printable_text(item) + "' is not ASSET:CHANGE";
    const std::string number = item.substr(colon + 1);
    char* end = nullptr;
    const double change = std::strtod(number.c_str(), &end);
    if (number.empty() || *end != '\0' || !std::isfinite(change))
      return "query parameter 'trade': the change of '" + storage::printable_text(item.substr(0, colon)) +
             "' is not a number";
    changes.push_back({{"asset", item.substr(0, colon)}, {"weight", change}});
  }
  if (changes.empty()) return "query parameter 'trade': no changes (give ASSET:CHANGE, comma-separated)";
  auto holdings = holdings_member(changes, "trade");
  if (const auto* error = std::get_if<std::string>(&holdings))
    return "query parameter 'trade'" + error->substr(error->find(':'));
  return holdings;
}

}  // namespace

ApiResponse stored_portfolio_risk_endpoint(const ApiContext& context, const ApiRequest& r) {
  RiskRequest q;
  q.window = WindowQuery{r.path_values.at("name"), r.parameter("as_of").value_or(""), {}};
  q.portfolio = r.parameter("portfolio").value_or("");
  if (q.portfolio.empty())
    return problem(400, "query parameter 'portfolio': name a stored portfolio (GET /v1/portfolios lists them; "
                        "POST sends weights instead)", r.path, "portfolio");
  q.portfolio_as_of = r.parameter("holdings_as_of").value_or("");
  q.benchmark = r.parameter("benchmark").value_or("");
  const auto no_benchmark =
      r.parameter("no_benchmark") ? flag_parameter(r, "no_benchmark") : std::variant<bool, ApiResponse>(false);
  if (const auto* p = std::get_if<ApiResponse>(&no_benchmark)) return *p;
  q.no_benchmark = std::get<bool>(no_benchmark);
  if (q.no_benchmark && !q.benchmark.empty())
    return problem(400, "query parameter 'no_benchmark': true, yet 'benchmark' names one; give one or the other",
                   r.path, "no_benchmark");
  if (const auto trade = r.parameter("trade")) {
    auto changes = trade_parameter(*trade);
    if (const auto* error = std::get_if<std::string>(&changes)) return problem(400, *error, r.path, "trade");
    q.trade = std::get<engine::Holdings>(std::move(changes));
  }
  return answer(context, r, q);
}

ApiResponse posted_weights_risk_endpoint(const ApiContext& context, const ApiRequest& r) {
  ordered_json body;
  try {
    body = parse_json_body(r.body);
  } catch (const std::invalid_argument& e) {
    return problem(400, std::string("body: ") + e.what(), r.path, "body");
  }
  if (!body.is_object())
    return problem(400, "body: must be a JSON object with \"weights\" (or \"portfolio\": a stored name)", r.path, "body");
  RiskRequest q;
  q.window = WindowQuery{r.path_values.at("name"), r.parameter("as_of").value_or(""), {}};
  for (const auto& [member, value] : body.items()) {
    auto bad = [&](const std::string& why) { return problem(400, "member '" + member + "': " + why, r.path, member); };
    if (member == "weights" || member == "holdings" || member == "benchmark_weights" || member == "trade") {
      auto holdings = holdings_member(value, member);
      if (const auto* error = std::get_if<std::string>(&holdings)) return problem(400, *error, r.path, member);
      auto& target = member == "benchmark_weights" ? q.benchmark_holdings : member == "trade" ? q.trade : q.holdings;
      if (target && member != "trade") return bad("give \"weights\" or \"holdings\", not both");
      target = std::get<engine::Holdings>(std::move(holdings));
    } else if (member == "portfolio" || member == "benchmark" || member == "holdings_as_of") {
      if (!value.is_string()) return bad("must be a string");
      (member == "portfolio" ? q.portfolio : member == "benchmark" ? q.benchmark : q.portfolio_as_of) =
          value.get<std::string>();
    } else if (member == "no_benchmark") {
      if (!value.is_boolean()) return bad("must be true or false");
      q.no_benchmark = value.get<bool>();
    } else {
      return bad("unknown member (known: weights, holdings, portfolio, holdings_as_of, benchmark, "
                 "benchmark_weights, no_benchmark, trade)");
    }
  }
  if (q.holdings && !q.portfolio.empty())
    return problem(400, "member 'portfolio': give weights or a stored portfolio's name, not both", r.path, "portfolio");
  if (q.holdings && !q.portfolio_as_of.empty())
    return problem(400, "member 'holdings_as_of': only for a stored portfolio (\"portfolio\"), not with weights", r.path,
                   "holdings_as_of");
  if (!q.holdings && q.portfolio.empty())
    return problem(400, "body: needs \"weights\" (or \"holdings\"), or \"portfolio\": a stored name", r.path, "weights");
  if (q.benchmark_holdings && !q.benchmark.empty())
    return problem(400, "member 'benchmark': give a stored name or \"benchmark_weights\", not both", r.path,
                   "benchmark");
  if (q.no_benchmark && (q.benchmark_holdings || !q.benchmark.empty()))
    return problem(400, "member 'no_benchmark': true, yet a benchmark is given", r.path, "no_benchmark");
  return answer(context, r, q);
}

}  // namespace factorwatch::server
