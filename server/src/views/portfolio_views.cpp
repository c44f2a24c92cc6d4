#include "portfolio_views.h"

#include <cmath>
#include <cstdio>

#include "text_format.h"

namespace factorwatch::server {
namespace {

using nlohmann::ordered_json;

struct Sums {
  double net = 0, gross = 0, long_weight = 0, short_weight = 0;
};

Sums sums_of(const engine::Holdings& holdings) {
  Sums s;
  for (const engine::Holding& h : holdings) {
    s.net += h.weight;
    s.gross += std::abs(h.weight);
    (h.weight > 0 ? s.long_weight : s.short_weight) += h.weight;
  }
  return s;
}

ordered_json sums_json(const Sums& s) {
  return {{"net", s.net}, {"gross", s.gross}, {"long", s.long_weight}, {"short", s.short_weight}};
}

ordered_json optional_text(const std::string& text) { return text.empty() ? ordered_json() : ordered_json(text); }

}  // namespace

ordered_json portfolio_list_json(const std::vector<storage::PortfolioSummary>& portfolios) {
  ordered_json list = ordered_json::array();
  for (const auto& p : portfolios)
    list.push_back({{"name", p.name},
                    {"latest_as_of", p.latest_as_of},
                    {"dates", p.dates},
                    {"benchmark", optional_text(p.benchmark)},
                    {"holdings", p.holdings},
                    {"net", p.net},
                    {"gross", p.gross},
                    {"stored_at", p.stored_at}});
  return {{"portfolios", std::move(list)}};
}

std::string portfolio_list_csv(const std::vector<storage::PortfolioSummary>& portfolios) {
  std::string out = "name,latest_as_of,dates,benchmark,holdings,net,gross,stored_at\n";
  for (const auto& p : portfolios)
    out += csv_field(p.name) + "," + p.latest_as_of.iso() + "," + std::to_string(p.dates) + "," + csv_field(p.benchmark) +
           "," + std::to_string(p.holdings) + "," + exact_number(p.net) + "," + exact_number(p.gross) + "," +
           p.stored_at + "\n";
  return out;
}

ordered_json portfolio_json(const storage::Portfolio& p, const std::vector<engine::Date>& dates) {
  ordered_json j;
  j["name"] = p.name;
  j["as_of"] = p.as_of;
  j["benchmark"] = optional_text(p.benchmark);
  j["source"] = p.source;
  j["stored_at"] = p.stored_at;
  j["sha256"] = p.content_sha256;
  j["weights"] = sums_json(sums_of(p.holdings));
  j["dates"] = dates;
  ordered_json holdings = ordered_json::array();
  for (const engine::Holding& h : p.holdings) holdings.push_back({{"asset", h.asset}, {"weight", h.weight}});
  j["holdings"] = std::move(holdings);
  return j;
}

std::string portfolio_csv(const storage::Portfolio& p) {
  std::string out = "asset,weight\n";
  for (const engine::Holding& h : p.holdings) out += csv_field(h.asset) + "," + exact_number(h.weight) + "\n";
  return out;
}

std::string stored_portfolio_text(const storage::Portfolio& p, const storage::SavePortfolioOutcome& o) {
  const Sums s = sums_of(p.holdings);
  const char* what = o.unchanged ? "unchanged (the same holdings were stored already)"
                     : o.replaced ? "replaced the holdings stored for this date"
                     : o.created  ? "new portfolio"
                                  : "new as-of date";
  char text[512];
  std::snprintf(text, sizeof text,
                "portfolio %s, as of %s: %zu holdings, %s\n  weights: net %.6g, gross %.6g, long %.6g, short %.6g%s\n",
                p.name.c_str(), p.as_of.iso().c_str(), p.holdings.size(), what, s.net, s.gross, s.long_weight,
                s.short_weight, std::abs(s.net - 1) > 1e-9 ? " (net is not 1; risk is measured on the weights as given)" : "");
  std::string out = text;
  if (!p.benchmark.empty()) out += "  benchmark: " + p.benchmark + "\n";
  if (o.unknown_assets > 0)
    out += "  " + std::to_string(o.unknown_assets) +
           " holding(s) name assets with no stored returns: risk reports list them as not modelled\n";
  return out;
}

ordered_json stored_portfolio_json(const storage::Portfolio& p, const storage::SavePortfolioOutcome& o) {
  ordered_json j;
  j["name"] = p.name;
  j["as_of"] = p.as_of;
  j["outcome"] = o.unchanged ? "unchanged" : o.replaced ? "replaced" : o.created ? "new portfolio" : "new as-of date";
  j["holdings"] = p.holdings.size();
  j["weights"] = sums_json(sums_of(p.holdings));
  j["benchmark"] = optional_text(p.benchmark);
  j["unknown_assets"] = o.unknown_assets;
  j["sha256"] = p.content_sha256;
  return j;
}

}  // namespace factorwatch::server
