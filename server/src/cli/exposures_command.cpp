#include "exposures_command.h"

#include <cstdio>
#include <iostream>
#include <nlohmann/json.hpp>

#include "exposures_view.h"

namespace factorwatch::server {
namespace {

void print_header(const pipeline::SelectedWindow& s) {
  const engine::FactorFit& f = s.window.fit;
  std::printf("model %s, version %d: %s, %d factors, %s basis\n", s.model.name.c_str(), s.model.version,
              engine::to_string(f.method), f.factors, engine::to_string(f.basis));
  std::printf("window %s .. %s (%lld dates): %zu assets fitted, %zu excluded; %s after %d iterations%s\n",
              s.window.first_date.iso().c_str(), s.window.as_of.iso().c_str(), static_cast<long long>(f.periods), f.assets.size(),
              f.excluded.size(), engine::to_string(f.termination), f.iterations,
              s.window.stale ? "; STALE: returns in this window changed since, run factorwatch refresh" : "");
  if (!s.note.empty()) std::printf("note: %s\n", s.note.c_str());
}

void print_exposures_table(const pipeline::SelectedWindow& s, int limit) {
  const engine::FactorFit& f = s.window.fit;
  print_header(s);
  std::printf("\nfactor  share of variance  assets loading most\n");
  for (Eigen::Index j = 0; j < f.loadings.cols(); ++j) {
    // The three largest absolute loadings name what the factor moves.
    std::vector<std::size_t> order(f.assets.size());
    for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
    const std::size_t top = std::min<std::size_t>(3, order.size());
    std::partial_sort(order.begin(), order.begin() + top, order.end(), [&](std::size_t a, std::size_t b) {
      return std::abs(f.loadings(a, j)) > std::abs(f.loadings(b, j));
    });
    std::string names;
    for (std::size_t k = 0; k < top; ++k) names += (k ? ", " : "") + table_text(f.assets[order[k]]);
    std::printf("%-6s  %16.1f%%  %s\n", pipeline::factor_name(j).c_str(), 100 * f.explained_share(j), names.c_str());
  }
  std::printf("\n%-14s", "asset");
  for (Eigen::Index j = 0; j < f.loadings.cols(); ++j) std::printf(" %10s", pipeline::factor_name(j).c_str());
  std::printf(" %12s %12s %10s\n", "communality", "specific_var", "uniqueness");
  const std::size_t shown = limit > 0 ? std::min<std::size_t>(limit, s.rows.size()) : s.rows.size();
  for (std::size_t r = 0; r < shown; ++r) {
    const std::size_t i = s.rows[r];
    std::printf("%-14s", table_text(f.assets[i]).c_str());
    for (Eigen::Index j = 0; j < f.loadings.cols(); ++j) std::printf(" %+10.5f", f.loadings(i, j));
    std::printf(" %12.4e %12.4e %10.3f%s\n", f.communality(i), f.specific_variance(i), f.uniqueness(i),
                f.heywood[i] ? "  (Heywood: specific variance at its floor)" : "");
  }
  if (shown < s.rows.size())
    std::printf("... %zu more; --limit 0 shows all, --format csv gives a spreadsheet file\n", s.rows.size() - shown);
  for (const auto& m : s.missing)
    std::printf("%-14s not in this window: %s\n", table_text(m.asset).c_str(), m.reason.c_str());
  std::printf("\nLoadings are in return units per factor of unit variance; communality and specific\n"
              "variance in squared return units per period; uniqueness = specific share of the variance.\n");
  print_caution(std::cout);
}

}  // namespace

CLI::App* add_exposures_command(CLI::App& app, WindowArguments& a) {
  CLI::App* command = app.add_subcommand("exposures", "Loadings, communality and specific variance per asset");
  add_window_options(command, a);
  return command;
}

int run_exposures_command(const WindowArguments& a, const GlobalArguments& global) {
  return run_on_window(a, global, "exposures", [&a](const pipeline::SelectedWindow& s) {
    if (a.format == "csv") std::cout << exposures_csv(s);
    else if (a.format == "json") std::cout << exposures_json(s).dump(2) << "\n";
    else print_exposures_table(s, a.limit);
  });
}

}  // namespace factorwatch::server
