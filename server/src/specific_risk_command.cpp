#include "specific_risk_command.h"

#include <cmath>
#include <cstdio>
#include <iostream>
#include <nlohmann/json.hpp>

#include "factorwatch/engine/caution.h"
#include "factorwatch/engine/frequency.h"

namespace factorwatch::server {
namespace {

struct Row {
  std::string asset;
  double specific_variance, specific_volatility, specific_volatility_annual;
  double total_variance, total_volatility_annual, specific_share;
  bool heywood;
};

// Modelled variance of asset i: communality + specific variance (diag of L Phi L' + Psi
// with Phi = I after the canonical step).
std::vector<Row> rows_of(const SelectedWindow& s, const engine::Frequency& frequency) {
  const engine::FactorFit& f = s.window.fit;
  const double annual = std::sqrt(static_cast<double>(frequency.periods_per_year));
  std::vector<Row> rows;
  for (std::size_t i : s.rows) {
    const double psi = f.specific_variance(i);
    const double total = (f.loadings.row(i) * f.factor_covariance * f.loadings.row(i).transpose())(0, 0) + psi;
    rows.push_back({f.assets[i], psi, std::sqrt(psi), std::sqrt(psi) * annual, total, std::sqrt(total) * annual,
                    psi / total, f.heywood[i]});
  }
  return rows;
}

engine::Frequency window_frequency(const SelectedWindow& s) {
  const auto periods = s.window.fit.periods;
  if (periods < 2) return {};
  return engine::frequency_from_gap(static_cast<double>(engine::days_between(s.window.first_date, s.window.as_of)) /
                                    static_cast<double>(periods - 1));
}

}  // namespace

CLI::App* add_specific_risk_command(CLI::App& app, WindowArguments& a) {
  CLI::App* command = app.add_subcommand("specific-risk", "Specific (idiosyncratic) risk per asset");
  add_window_options(command, a);
  return command;
}

int run_specific_risk_command(const WindowArguments& a, const GlobalArguments& global) {
  return run_on_window(a, global, "specific-risk", [&a](const SelectedWindow& s) {
    const engine::Frequency frequency = window_frequency(s);
    const std::vector<Row> rows = rows_of(s, frequency);
    if (a.format == "csv") {
      print_csv_caution(std::cout);
      std::cout << "# model " << s.model.name << " version " << s.model.version << ", window " << s.window.first_date
                << " .. " << s.window.as_of << ", " << frequency.name << " data, annualised by sqrt("
                << frequency.periods_per_year << ")\n";
      std::cout << "asset,specific_variance,specific_volatility,specific_volatility_annual,total_variance,"
                   "total_volatility_annual,specific_share,heywood\n";
      for (const Row& r : rows)
        std::cout << csv_field(r.asset) << "," << exact_number(r.specific_variance) << ","
                  << exact_number(r.specific_volatility) << "," << exact_number(r.specific_volatility_annual) << ","
                  << exact_number(r.total_variance) << "," << exact_number(r.total_volatility_annual) << ","
                  << exact_number(r.specific_share) << "," << (r.heywood ? "true" : "false") << "\n";
    } else if (a.format == "json") {
      nlohmann::ordered_json j;
      j["caution"] = engine::kCaution;
      j["model"] = s.model.name;
      j["version"] = s.model.version;
      j["as_of"] = s.window.as_of;
      j["first_date"] = s.window.first_date;
      j["frequency"] = frequency.name;
      j["periods_per_year"] = frequency.periods_per_year;
      j["stale"] = s.window.stale;
      if (!s.note.empty()) j["note"] = s.note;
      nlohmann::ordered_json out = nlohmann::ordered_json::array();
      for (const Row& r : rows)
        out.push_back({{"asset", r.asset},
                       {"specific_variance", r.specific_variance},
                       {"specific_volatility", r.specific_volatility},
                       {"specific_volatility_annual", r.specific_volatility_annual},
                       {"total_variance", r.total_variance},
                       {"total_volatility_annual", r.total_volatility_annual},
                       {"specific_share", r.specific_share},
                       {"heywood", r.heywood}});
      j["assets"] = out;
      j["not_in_window"] = missing_json(s);
      std::cout << j.dump(2) << "\n";
    } else {
      std::printf("model %s, version %d: window %s .. %s, %s data, annualised by sqrt(%d)%s\n", s.model.name.c_str(),
                  s.model.version, s.window.first_date.c_str(), s.window.as_of.c_str(), frequency.name,
                  frequency.periods_per_year, s.window.stale ? "; STALE, run factorwatch refresh" : "");
      if (!s.note.empty()) std::printf("note: %s\n", s.note.c_str());
      std::printf("\n%-14s %14s %14s %16s %14s\n", "asset", "specific vol", "specific vol", "total vol", "specific");
      std::printf("%-14s %14s %14s %16s %14s\n", "", "per period", "annualised", "annualised", "share");
      const std::size_t shown = a.limit > 0 ? std::min<std::size_t>(a.limit, rows.size()) : rows.size();
      for (std::size_t k = 0; k < shown; ++k) {
        const Row& r = rows[k];
        std::printf("%-14s %13.3f%% %13.2f%% %15.2f%% %13.1f%%%s\n", r.asset.c_str(), 100 * r.specific_volatility,
                    100 * r.specific_volatility_annual, 100 * r.total_volatility_annual, 100 * r.specific_share,
                    r.heywood ? "  (Heywood)" : "");
      }
      if (shown < rows.size())
        std::printf("... %zu more; --limit 0 shows all, --format csv gives a spreadsheet file\n", rows.size() - shown);
      for (const auto& m : s.missing) std::printf("%-14s not in this window: %s\n", m.asset.c_str(), m.reason.c_str());
      print_caution(std::cout);
    }
  });
}

}  // namespace factorwatch::server
