#include "specific_risk_command.h"

#include <cstdio>
#include <iostream>
#include <nlohmann/json.hpp>

#include "specific_risk_view.h"

namespace factorwatch::server {

CLI::App* add_specific_risk_command(CLI::App& app, WindowArguments& a) {
  CLI::App* command = app.add_subcommand("specific-risk", "Specific (idiosyncratic) risk per asset");
  add_window_options(command, a);
  return command;
}

int run_specific_risk_command(const WindowArguments& a, const GlobalArguments& global) {
  return run_on_window(a, global, "specific-risk", [&a](const pipeline::SelectedWindow& s) {
    if (a.format == "csv") {
      std::cout << specific_risk_csv(s);
    } else if (a.format == "json") {
      std::cout << specific_risk_json(s).dump(2) << "\n";
    } else {
      const engine::Frequency frequency = pipeline::window_frequency(s);
      const std::vector<SpecificRiskRow> rows = specific_risk_rows(s, frequency);
      std::printf("model %s, version %d: window %s .. %s, %s data, annualised by sqrt(%d)%s\n", s.model.name.c_str(),
                  s.model.version, s.window.first_date.iso().c_str(), s.window.as_of.iso().c_str(), frequency.name,
                  frequency.periods_per_year, s.window.stale ? "; STALE, run factorwatch refresh" : "");
      if (!s.note.empty()) std::printf("note: %s\n", s.note.c_str());
      std::printf("\n%-14s %14s %14s %16s %14s\n", "asset", "specific vol", "specific vol", "total vol", "specific");
      std::printf("%-14s %14s %14s %16s %14s\n", "", "per period", "annualised", "annualised", "share");
      const std::size_t shown = a.limit > 0 ? std::min<std::size_t>(a.limit, rows.size()) : rows.size();
      for (std::size_t k = 0; k < shown; ++k) {
        const SpecificRiskRow& r = rows[k];
        std::printf("%-14s %13.3f%% %13.2f%% %15.2f%% %13.1f%%%s\n", table_text(r.asset).c_str(),
                    100 * r.specific_volatility,
                    100 * r.specific_volatility_annual, 100 * r.total_volatility_annual, 100 * r.specific_share,
                    r.heywood ? "  (Heywood)" : "");
      }
      if (shown < rows.size())
        std::printf("... %zu more; --limit 0 shows all, --format csv gives a spreadsheet file\n", rows.size() - shown);
      for (const auto& m : s.missing)
        std::printf("%-14s not in this window: %s\n", table_text(m.asset).c_str(), m.reason.c_str());
      print_caution(std::cout);
    }
  });
}

}  // namespace factorwatch::server
