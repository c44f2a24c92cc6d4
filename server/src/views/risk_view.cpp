#include "risk_view.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <numeric>

#include "factorwatch/engine/caution.h"
#include "text_format.h"

namespace factorwatch::server {
namespace {

using nlohmann::ordered_json;

double annualised(const pipeline::WindowRiskModel& w, double per_period) {
  return per_period * std::sqrt(static_cast<double>(w.frequency.periods_per_year));
}

// The modelled variance of one asset, L_i Phi L_i' + psi_i: what a position of weight 1
// alone would carry (its stand-alone risk).
double asset_variance(const engine::RiskModel& m, const std::string& asset) {
  const Eigen::Index r = m.row_of(asset);
  if (r < 0) return std::nan("");
  return (m.loadings().row(r) * m.factor_covariance() * m.loadings().row(r).transpose())(0, 0) +
         m.specific_variance()(r);
}

ordered_json figure_json(const engine::RiskFigure& f) {
  return {{"variance", f.variance},
          {"volatility", f.volatility},
          {"annualised_variance", f.annualised_variance},
          {"annualised_volatility", f.annualised_volatility}};
}

ordered_json weights_json(const engine::WeightSummary& s) {
  return {{"holdings", s.holdings},       {"modelled", s.modelled},
          {"net", s.net},                 {"gross", s.gross},
          {"long", s.long_weight},        {"short", s.short_weight},
          {"modelled_net", s.modelled_net}, {"modelled_gross", s.modelled_gross},
          {"not_modelled_gross", s.not_modelled_gross}};
}

ordered_json book_json(const pipeline::WindowRiskModel& w, const pipeline::RiskBook& b, const RiskViewOptions& o) {
  const engine::PortfolioRisk& r = b.risk;
  ordered_json j;
  j["book"] = b.role;
  j["name"] = b.name.empty() ? ordered_json() : ordered_json(b.name);
  j["holdings_as_of"] = b.as_of;
  j["weights"] = weights_json(r.weights);
  j["total"] = figure_json(r.total);
  j["systematic"] = figure_json(r.systematic);
  j["specific"] = figure_json(r.specific);
  j["systematic_share"] = json_number(r.systematic_share);
  ordered_json factors = ordered_json::array();
  for (const engine::FactorContribution& c : r.by_factor)
    factors.push_back({{"factor", pipeline::factor_name(c.factor)},
                       {"exposure", c.exposure},
                       {"variance", c.variance},
                       {"contribution", c.volatility},
                       {"contribution_annual", annualised(w, c.volatility)},
                       {"share", json_number(c.share)}});
  j["by_factor"] = std::move(factors);
  j["specific_contribution"] = {{"variance", r.specific.variance},
                                {"contribution", r.specific_volatility_contribution},
                                {"contribution_annual", annualised(w, r.specific_volatility_contribution)},
                                {"share", json_number(r.total.variance > 0 ? r.specific.variance / r.total.variance
                                                                           : std::nan(""))}};
  if (o.by_asset) {
    // One row per holding, 2,000 or more: each object is filled in place, its members
    // appended in order (the names differ, so the map's search for an existing one is
    // skipped). A braced list would build every member as a two-element array first and
    // copy it, which took half of a 2,000-name risk query (docs/performance.md, "Risk
    // queries"). The bytes dumped are the same.
    ordered_json assets = ordered_json::array();
    assets.get_ref<ordered_json::array_t&>().reserve(r.by_asset.size());
    for (const engine::AssetContribution& c : r.by_asset) {
      ordered_json row(ordered_json::value_t::object);
      auto& members = row.get_ref<ordered_json::object_t&>();
      members.reserve(9);
      members.emplace_back("asset", c.asset);
      members.emplace_back("weight", c.weight);
      members.emplace_back("systematic_variance", c.systematic_variance);
      members.emplace_back("specific_variance", c.specific_variance);
      members.emplace_back("variance", c.variance);
      members.emplace_back("marginal", c.marginal);
      members.emplace_back("contribution", c.volatility);
      members.emplace_back("contribution_annual", annualised(w, c.volatility));
      members.emplace_back("share", json_number(c.share));
      assets.get_ref<ordered_json::array_t&>().push_back(std::move(row));
    }
    j["by_asset"] = std::move(assets);
  }
  ordered_json missing = ordered_json::array();
  for (const engine::NotModelled& m : r.not_modelled)
    missing.push_back({{"asset", m.asset}, {"weight", m.weight}, {"reason", m.reason}});
  j["not_modelled"] = std::move(missing);
  return j;
}

// One CSV row: book, part, name, weight, exposure, marginal, variance, contribution,
// contribution_annual, share, standalone_volatility, standalone_volatility_annual, reason.
struct CsvRow {
  std::string part, name;
  double weight = NAN, exposure = NAN, marginal = NAN, variance = NAN, contribution = NAN, share = NAN,
         standalone = NAN;
  std::string reason;
};

void append_row(std::string& out, const pipeline::WindowRiskModel& w, const std::string& book, const CsvRow& r) {
  out += book + "," + r.part + "," + csv_field(r.name);
  for (double x : {r.weight, r.exposure, r.marginal, r.variance, r.contribution, annualised(w, r.contribution), r.share,
                   r.standalone, annualised(w, r.standalone)}) {
    out += ',';
    out += csv_number(x);
  }
  out += "," + csv_field(r.reason) + "\n";
}

std::string heading_words(const pipeline::RiskReport& report) {
  const pipeline::WindowRiskModel& w = *report.window;
  std::string text = "model " + w.model.name + " version " + std::to_string(w.model.version) + ", window " +
                     w.first_date.iso() + " .. " + w.as_of.iso() + ", " + w.frequency.name + " data, annualised by sqrt(" +
                     std::to_string(w.frequency.periods_per_year) + "), " + w.basis;
  if (w.stale) text += "; STALE (returns changed after the fit)";
  return text;
}

std::string book_words(const pipeline::RiskBook& b) {
  std::string text = b.role;
  if (!b.name.empty()) text += " " + b.name;
  if (b.as_of) text += " (holdings as of " + b.as_of->iso() + ")";
  if (b.name.empty() && (b.role == "portfolio" || b.role == "after_trade")) text += " (weights sent)";
  return text;
}

std::string percent(double x, int decimals = 2) {
  if (!std::isfinite(x)) return "-";
  char text[32];
  std::snprintf(text, sizeof text, "%.*f%%", decimals, 100 * x);
  return text;
}

}  // namespace

ordered_json risk_json(const pipeline::RiskReport& report, const RiskViewOptions& o) {
  const pipeline::WindowRiskModel& w = *report.window;
  ordered_json j;
  j["caution"] = engine::kCaution;
  j["model"] = w.model.name;
  j["version"] = w.model.version;
  j["as_of"] = w.as_of;
  j["first_date"] = w.first_date;
  j["stale"] = w.stale;
  j["frequency"] = w.frequency.name;
  j["periods_per_year"] = w.frequency.periods_per_year;
  j["factor_basis"] = w.basis;
  ordered_json factors = ordered_json::array();
  for (Eigen::Index f = 0; f < w.risk.factors(); ++f) factors.push_back(pipeline::factor_name(f));
  j["factors"] = std::move(factors);
  if (!report.note.empty()) j["note"] = report.note;
  j["not_modelled_treatment"] =
      "holdings the window does not model carry no risk in these figures; they are listed with their weight "
      "and the reason";
  ordered_json books = ordered_json::array();
  for (const pipeline::RiskBook& b : report.books) books.push_back(book_json(w, b, o));
  j["books"] = std::move(books);
  return j;
}

std::string risk_csv(const pipeline::RiskReport& report, const RiskViewOptions& o) {
  const pipeline::WindowRiskModel& w = *report.window;
  std::string out = csv_caution_line();
  out += "# " + heading_words(report);
  for (const pipeline::RiskBook& b : report.books)
    if (b.role == "portfolio" || b.role == "benchmark") out += "; " + book_words(b);
  out += "\n";
  if (!report.note.empty()) out += "# note: " + report.note + "\n";
  out += "book,part,name,weight,exposure,marginal,variance,contribution,contribution_annual,share,"
         "standalone_volatility,standalone_volatility_annual,reason\n";
  for (const pipeline::RiskBook& b : report.books) {
    const engine::PortfolioRisk& r = b.risk;
    const double total = r.total.variance;
    const double sigma = r.total.volatility;
    auto share = [total](double v) { return total > 0 ? v / total : NAN; };
    auto contribution = [sigma](double v) { return sigma > 0 ? v / sigma : 0.0; };
    append_row(out, w, b.role, {"total", "", r.weights.net, NAN, NAN, total, sigma, total > 0 ? 1.0 : NAN, sigma, ""});
    append_row(out, w, b.role,
               {"systematic", "", NAN, NAN, NAN, r.systematic.variance, contribution(r.systematic.variance),
                r.systematic_share, r.systematic.volatility, ""});
    append_row(out, w, b.role,
               {"specific", "", NAN, NAN, NAN, r.specific.variance, r.specific_volatility_contribution,
                share(r.specific.variance), r.specific.volatility, ""});
    for (const engine::FactorContribution& c : r.by_factor) {
      const double phi = w.risk.factor_covariance()(c.factor, c.factor);
      append_row(out, w, b.role,
                 {"factor", pipeline::factor_name(c.factor), NAN, c.exposure, NAN, c.variance, c.volatility, c.share,
                  std::abs(c.exposure) * std::sqrt(phi), ""});
    }
    if (o.by_asset)
      for (const engine::AssetContribution& c : r.by_asset)
        append_row(out, w, b.role,
                   {"asset", c.asset, c.weight, NAN, c.marginal, c.variance, c.volatility, c.share,
                    std::abs(c.weight) * std::sqrt(asset_variance(w.risk, c.asset)), ""});
    for (const engine::NotModelled& m : r.not_modelled)
      append_row(out, w, b.role, {"not_modelled", m.asset, m.weight, NAN, NAN, NAN, NAN, NAN, NAN, m.reason});
  }
  return out;
}

std::string risk_table(const pipeline::RiskReport& report, const RiskViewOptions& o) {
  const pipeline::WindowRiskModel& w = *report.window;
  std::string out = heading_words(report) + "\n";
  if (!report.note.empty()) out += "note: " + report.note + "\n";
  char line[512];
  for (const pipeline::RiskBook& b : report.books) {
    const engine::WeightSummary& s = b.risk.weights;
    std::snprintf(line, sizeof line, "%s: %zu holdings, %zu modelled; weights net %.4g, gross %.4g, long %.4g, short %.4g\n",
                  book_words(b).c_str(), s.holdings, s.modelled, s.net, s.gross, s.long_weight, s.short_weight);
    out += line;
  }

  // The summary, one column per book.
  out += "\n";
  std::snprintf(line, sizeof line, "%-28s", "");
  out += line;
  for (const pipeline::RiskBook& b : report.books) {
    std::snprintf(line, sizeof line, " %18s", b.role.c_str());
    out += line;
  }
  out += "\n";
  auto summary_row = [&](const char* label, auto value) {
    std::snprintf(line, sizeof line, "%-28s", label);
    out += line;
    for (const pipeline::RiskBook& b : report.books) {
      std::snprintf(line, sizeof line, " %18s", value(b.risk).c_str());
      out += line;
    }
    out += "\n";
  };
  summary_row("volatility, annualised", [](const engine::PortfolioRisk& r) { return percent(r.total.annualised_volatility); });
  summary_row("  systematic (stand-alone)",
              [](const engine::PortfolioRisk& r) { return percent(r.systematic.annualised_volatility); });
  summary_row("  specific (stand-alone)",
              [](const engine::PortfolioRisk& r) { return percent(r.specific.annualised_volatility); });
  summary_row("systematic share of variance", [](const engine::PortfolioRisk& r) { return percent(r.systematic_share, 1); });
  summary_row("volatility, per period", [](const engine::PortfolioRisk& r) { return percent(r.total.volatility, 3); });

  for (const pipeline::RiskBook& b : report.books) {
    const engine::PortfolioRisk& r = b.risk;
    out += "\n" + book_words(b) + ": contributions to annualised volatility (they add up to " +
           percent(r.total.annualised_volatility) + ")\n";
    std::snprintf(line, sizeof line, "  %-14s %12s %14s %10s\n", "factor", "exposure", "contribution", "share");
    out += line;
    for (const engine::FactorContribution& c : r.by_factor) {
      std::snprintf(line, sizeof line, "  %-14s %12.4g %14s %10s\n", pipeline::factor_name(c.factor).c_str(), c.exposure,
                    percent(annualised(w, c.volatility)).c_str(), percent(c.share, 1).c_str());
      out += line;
    }
    std::snprintf(line, sizeof line, "  %-14s %12s %14s %10s\n", "specific", "",
                  percent(annualised(w, r.specific_volatility_contribution)).c_str(),
                  percent(r.total.variance > 0 ? r.specific.variance / r.total.variance : NAN, 1).c_str());
    out += line;

    // The largest contributions first, by size (hedges contribute negatively).
    std::vector<std::size_t> order(r.by_asset.size());
    std::iota(order.begin(), order.end(), std::size_t{0});
    std::stable_sort(order.begin(), order.end(), [&r](std::size_t a, std::size_t c) {
      return std::abs(r.by_asset[a].volatility) > std::abs(r.by_asset[c].volatility);
    });
    const std::size_t shown = o.limit > 0 ? std::min<std::size_t>(static_cast<std::size_t>(o.limit), order.size())
                                          : order.size();
    if (shown > 0) {
      std::snprintf(line, sizeof line, "  %-14s %12s %14s %10s\n", "asset", "weight", "contribution", "share");
      out += line;
    }
    for (std::size_t n = 0; n < shown; ++n) {
      const engine::AssetContribution& c = r.by_asset[order[n]];
      std::snprintf(line, sizeof line, "  %-14s %12.4g %14s %10s\n", table_text(c.asset).c_str(), c.weight,
                    percent(annualised(w, c.volatility)).c_str(), percent(c.share, 1).c_str());
      out += line;
    }
    if (shown < order.size()) {
      std::snprintf(line, sizeof line, "  ... %zu more (--limit 0 shows all; --format csv for a spreadsheet)\n",
                    order.size() - shown);
      out += line;
    }
    for (const engine::NotModelled& m : r.not_modelled) {
      std::snprintf(line, sizeof line, "  not modelled: %s, weight %.4g: %s (carries no risk here)\n",
                    table_text(m.asset).c_str(), m.weight, m.reason.c_str());
      out += line;
    }
  }
  out += std::string("\nCaution: ") + engine::kCaution + "\n";
  return out;
}

}  // namespace factorwatch::server
