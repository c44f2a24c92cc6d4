#include "risk_endpoints.h"

#include <cmath>

#include "endpoint_helpers.h"
#include "factorwatch/pipeline/risk_query.h"
#include "factorwatch/storage/identifier_rule.h"
#include "risk_body.h"
#include "risk_model_cache.h"
#include "risk_view.h"
#include "text_format.h"

namespace factorwatch::server {
namespace {

using nlohmann::ordered_json;

// The window's risk model from the daemon's cache, read and indexed on a miss.
std::shared_ptr<const pipeline::WindowRiskModel> cached_model(const ApiContext& context, storage::Database& db,
                                                    const pipeline::WindowPick& pick) {
  if (pick.failure) return nullptr;
  // The name too: a renamed model keeps its version ids, and the report names the model.
  const std::string key = std::to_string(pick.model.id) + "|" + pick.model.name + "|" + pick.stamp.key();
  if (context.risk_models)
    if (auto model = context.risk_models->find(key)) return model;
  auto model = pipeline::load_window_risk_model(db, pick);
  if (context.risk_models) context.risk_models->put(key, model);
  return model;
}

ApiResponse answer(const ApiContext& context, const ApiRequest& r, const pipeline::RiskRequest& q) {
  const auto format = negotiate_format(r);
  if (const auto* p = std::get_if<ApiResponse>(&format)) return *p;
  const auto by_asset = r.parameter("by_asset") ? flag_parameter(r, "by_asset") : std::variant<bool, ApiResponse>(true);
  if (const auto* p = std::get_if<ApiResponse>(&by_asset)) return *p;

  storage::Database& db = context.database();
  const pipeline::WindowPick pick = pipeline::pick_window(db, q.window);
  const pipeline::RiskOutcome outcome = pipeline::answer_risk(db, q, pick, cached_model(context, db, pick));
  // The window's date is always in the query string; the rest is in the query string of a
  // GET and in the body of a POST.
  if (const auto& f = outcome.failure) return failure_problem(r, *f, r.method == "POST" && f->field != "as_of");
  const RiskViewOptions view{std::get<bool>(by_asset), 0};
  if (std::get<Format>(format) == Format::csv) {
    const std::string name = q.portfolio.empty() ? "weights" : q.portfolio;
    return csv_response(risk_csv(outcome.report, view),
                        q.window.model + "-risk-" + name + "-" + outcome.report.window->as_of.iso() + ".csv", true);
  }
  return json_response(risk_json(outcome.report, view));
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
  pipeline::RiskRequest q;
  q.window.model = r.path_values.at("name");
  if (auto bad = date_parameter(r, "as_of", q.window.as_of)) return *bad;
  q.portfolio = r.parameter("portfolio").value_or("");
  if (q.portfolio.empty())
    return problem(400, "query parameter 'portfolio': name a stored portfolio (GET /v1/portfolios lists them; "
                        "POST sends weights instead)", r.path, "portfolio");
  if (auto bad = date_parameter(r, "holdings_as_of", q.portfolio_as_of)) return *bad;
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
  pipeline::RiskRequest q;
  q.window.model = r.path_values.at("name");
  if (auto bad = date_parameter(r, "as_of", q.window.as_of)) return *bad;
  if (auto bad = read_risk_body(r.body, q)) return problem(400, bad->message, r.path, bad->field);
  return answer(context, r, q);
}

}  // namespace factorwatch::server
