#include "risk_body.h"

#include <cmath>
#include <unordered_set>

#include "endpoint_helpers.h"
#include "factorwatch/pipeline/request_dates.h"
#include "factorwatch/storage/identifier_rule.h"
#include "factorwatch/storage/portfolios.h"

namespace factorwatch::server {

using nlohmann::ordered_json;

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

std::optional<BodyProblem> read_risk_body(std::string_view text, pipeline::RiskRequest& q) {
  ordered_json body;
  try {
    body = parse_json_body(text);
  } catch (const std::invalid_argument& e) {
    return BodyProblem{std::string("body: ") + e.what(), "body"};
  }
  if (!body.is_object())
    return BodyProblem{"body: must be a JSON object with \"weights\" (or \"portfolio\": a stored name)", "body"};
  for (const auto& item : body.items()) {
    // Named copies rather than a structured binding: C++17 lambdas cannot capture one.
    const std::string& member = item.key();
    const ordered_json& value = item.value();
    auto bad = [&](const std::string& why) { return BodyProblem{"member '" + member + "': " + why, member}; };
    if (member == "weights" || member == "holdings" || member == "benchmark_weights" || member == "trade") {
      auto holdings = holdings_member(value, member);
      if (const auto* error = std::get_if<std::string>(&holdings)) return BodyProblem{*error, member};
      auto& target = member == "benchmark_weights" ? q.benchmark_holdings : member == "trade" ? q.trade : q.holdings;
      if (target && member != "trade") return bad("give \"weights\" or \"holdings\", not both");
      target = std::get<engine::Holdings>(std::move(holdings));
    } else if (member == "portfolio" || member == "benchmark" || member == "holdings_as_of") {
      if (!value.is_string()) return bad("must be a string");
      if (member == "holdings_as_of") {
        if (auto f = pipeline::read_date(member, value.get<std::string>(), q.portfolio_as_of))
          return BodyProblem{failure_text(*f, true), member};
      } else {
        (member == "portfolio" ? q.portfolio : q.benchmark) = value.get<std::string>();
      }
    } else if (member == "no_benchmark") {
      if (!value.is_boolean()) return bad("must be true or false");
      q.no_benchmark = value.get<bool>();
    } else {
      return bad("unknown member (known: weights, holdings, portfolio, holdings_as_of, benchmark, "
                 "benchmark_weights, no_benchmark, trade)");
    }
  }
  if (q.holdings && !q.portfolio.empty())
    return BodyProblem{"member 'portfolio': give weights or a stored portfolio's name, not both", "portfolio"};
  if (q.holdings && q.portfolio_as_of)
    return BodyProblem{"member 'holdings_as_of': only for a stored portfolio (\"portfolio\"), not with weights",
                       "holdings_as_of"};
  if (!q.holdings && q.portfolio.empty())
    return BodyProblem{"body: needs \"weights\" (or \"holdings\"), or \"portfolio\": a stored name", "weights"};
  if (q.benchmark_holdings && !q.benchmark.empty())
    return BodyProblem{"member 'benchmark': give a stored name or \"benchmark_weights\", not both", "benchmark"};
  if (q.no_benchmark && (q.benchmark_holdings || !q.benchmark.empty()))
    return BodyProblem{"member 'no_benchmark': true, yet a benchmark is given", "no_benchmark"};
  return std::nullopt;
}

}  // namespace factorwatch::server
