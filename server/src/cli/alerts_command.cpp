#include "alerts_command.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <iostream>

#include "alerts_view.h"
#include "drift_selection.h"
#include "factorwatch/pipeline/drift_query.h"
#include "factorwatch/pipeline/window_query.h"

namespace factorwatch::server {
namespace {

void print_alerts_table(const pipeline::AlertList& a) {
  const storage::ModelConfig& c = a.model.config;
  std::printf("model %s, version %d: %zu alert%s\n", a.model.name.c_str(), a.model.version, a.alerts.size(),
              a.alerts.size() == 1 ? "" : "s");
  std::printf("alerts: against the previous window %s; against the pinned window %s\n\n",
              threshold_text(c.alert_below).c_str(), threshold_text(c.alert_below_pinned).c_str());
  if (a.alerts.empty()) {
    std::printf("no window in this range raised an alert\n");
  } else {
    std::printf("%-10s  %-8s  %-13s %-6s %10s %9s  %s\n", "as of", "against", "compared with", "factor", "congruence",
                "threshold", "assets that moved most (standardized change)");
    for (const storage::DriftAlert& x : a.alerts)
      std::printf("%-10s  %-8s  %-13s %-6s %10.4f %9.3f  %s\n", x.as_of.iso().c_str(), x.against.c_str(),
                  x.against_as_of.iso().c_str(), pipeline::factor_name(x.factor - 1).c_str(), x.congruence, x.threshold,
                  table_text(movers_text(x.movers, kMoversShown)).c_str());
  }
  const bool vanished = std::any_of(a.alerts.begin(), a.alerts.end(),
                                    [](const storage::DriftAlert& x) { return std::isnan(x.congruence); });
  if (vanished) std::printf("\ncongruence nan: the factor vanished (its loadings are all zero in one window).");
  std::printf("\nfactorwatch drift NAME --window DATE compares a window asset by asset.\n");
  print_caution(std::cout);
}

}  // namespace

CLI::App* add_alerts_command(CLI::App& app, AlertsArguments& a) {
  CLI::App* command = app.add_subcommand("alerts", "Windows whose factors drifted past the model's thresholds");
  command->add_option("NAME", a.model, "Model name")->required();
  add_date_range_options(command, a.from, a.to);
  add_format_option(command, a.format);
  return command;
}

int run_alerts_command(const AlertsArguments& a, const GlobalArguments& global) {
  auto db = open_database(global, "alerts");
  if (!db) return kExitFailed;
  try {
    pipeline::RangeQuery range;
    if (auto f = read_range(a.model, a.from, a.to, range)) return report_failure("alerts", *f, a.model);
    pipeline::AlertList list;
    if (auto f = pipeline::find_alerts(*db, range, list)) return report_failure("alerts", *f, a.model);
    if (a.format == "csv") std::cout << alerts_csv(list);
    else if (a.format == "json") std::cout << alerts_json(list).dump(2) << "\n";
    else print_alerts_table(list);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch alerts: %s\n", e.what());
    return kExitFailed;
  }
  return kExitOk;
}

}  // namespace factorwatch::server
