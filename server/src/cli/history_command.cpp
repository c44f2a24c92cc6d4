#include "history_command.h"

#include <cmath>
#include <cstdio>
#include <iostream>

#include "drift_selection.h"
#include "factorwatch/pipeline/drift_query.h"
#include "factorwatch/pipeline/window_query.h"
#include "history_view.h"

namespace factorwatch::server {
namespace {

void print_history_table(const pipeline::AssetHistory& h) {
  const Eigen::Index k = h.model.config.fit.factors;
  std::size_t present = 0;
  for (const auto& p : h.points) present += p.present;
  std::printf("model %s, version %d: asset %s in %zu of %zu windows\n\n", h.model.name.c_str(), h.model.version,
              table_text(h.asset).c_str(), present, h.points.size());
  std::printf("%-10s", "as of");
  for (Eigen::Index j = 0; j < k; ++j) std::printf(" %11s", pipeline::factor_name(j).c_str());
  std::printf(" %12s %12s  %s\n", "communality", "specific vol", "alignment");
  for (const pipeline::ExposurePoint& p : h.points) {
    std::printf("%-10s", p.as_of.iso().c_str());
    if (!p.present) {
      std::printf(" not in this window (not fitted, or the fit is not usable)\n");
      continue;
    }
    for (Eigen::Index j = 0; j < k; ++j) std::printf(" %+11.5f", j < p.exposures.size() ? p.exposures(j) : NAN);
    std::printf(" %12.4e %12.5f  %s\n", p.communality, std::sqrt(p.specific_variance), p.alignment.c_str());
  }
  std::printf("\nExposures in return units per factor of unit variance, rotated and aligned as served;\n"
              "communality in squared return units per period; specific vol per period.\n");
  print_caution(std::cout);
}

}  // namespace

CLI::App* add_history_command(CLI::App& app, HistoryArguments& a) {
  CLI::App* command = app.add_subcommand("history", "One asset's exposures and specific risk in every window");
  command->add_option("NAME", a.model, "Model name")->required();
  command->add_option("ASSET", a.asset, "Asset name")->required();
  add_date_range_options(command, a.from, a.to);
  add_format_option(command, a.format);
  return command;
}

int run_history_command(const HistoryArguments& a, const GlobalArguments& global) {
  auto db = open_database(global, "history");
  if (!db) return kExitFailed;
  try {
    pipeline::RangeQuery range;
    if (auto f = read_range(a.model, a.from, a.to, range)) return report_failure("history", *f, a.model);
    pipeline::AssetHistory h;
    if (auto f = pipeline::find_asset_history(*db, range, a.asset, h))
      return report_failure("history", *f, a.model);
    if (a.format == "csv") std::cout << history_csv(h);
    else if (a.format == "json") std::cout << history_json(h).dump(2) << "\n";
    else print_history_table(h);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch history: %s\n", e.what());
    return kExitFailed;
  }
  return kExitOk;
}

}  // namespace factorwatch::server
