#include "windows_command.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <iostream>
#include <nlohmann/json.hpp>

#include "factorwatch/storage/models.h"
#include "factorwatch/storage/windows.h"
#include "model_views.h"

namespace factorwatch::server {
namespace {

// Why each window without a usable fit has none, below the table (too long for a column):
// windows failing for the same reason share one line, in the order of their dates.
void print_unusable_reasons(const std::vector<storage::WindowSummary>& windows) {
  std::vector<std::pair<std::string, std::vector<engine::Date>>> groups;
  for (const auto& w : windows) {
    if (w.usable) continue;
    const std::string reason = w.reason.empty() ? w.termination : w.reason;
    auto it = std::find_if(groups.begin(), groups.end(), [&](const auto& g) { return g.first == reason; });
    if (it == groups.end()) groups.push_back({reason, {w.as_of}});
    else it->second.push_back(w.as_of);
  }
  if (!groups.empty()) std::printf("\n");
  for (const auto& [reason, dates] : groups) {
    const std::string when = dates.size() == 1 ? dates.front().iso()
                                               : std::to_string(dates.size()) + " windows, " + dates.front().iso() +
                                                     " .. " + dates.back().iso();
    std::printf("not usable (%s): %s\n", when.c_str(), reason.c_str());
  }
}

}  // namespace

CLI::App* add_windows_command(CLI::App& app, WindowsArguments& a) {
  CLI::App* command = app.add_subcommand("windows", "A model's stored windows with their fit statistics");
  command->add_option("NAME", a.model, "Model name")->required();
  add_format_option(command, a.format);
  return command;
}

int run_windows_command(const WindowsArguments& a, const GlobalArguments& global) {
  auto db = open_database(global, "windows");
  if (!db) return kExitFailed;
  try {
    const auto model = storage::find_model(*db, a.model);
    if (!model) {
      std::fprintf(stderr, "factorwatch windows: no model named '%s' (factorwatch model list shows them)\n",
                   a.model.c_str());
      return kExitBadInput;
    }
    const auto windows = storage::list_windows(*db, model->id);
    if (a.format == "json") {
      std::cout << windows_json(*model, windows).dump(2) << "\n";
      return kExitOk;
    }
    if (a.format == "csv") {
      std::cout << windows_csv(windows);
      return kExitOk;
    }
    std::printf("model %s, version %d: %zu windows\n\n", model->name.c_str(), model->version, windows.size());
    std::printf("%-10s  %-10s %6s %6s %5s %8s %-16s %5s %14s %9s %7s %8s  %-22s %9s\n", "as of", "from", "dates",
                "assets", "excl", "factors", "termination", "iter", "loglik/obs", "explained", "heywood", "fit ms",
                "alignment", "residual");
    for (const auto& w : windows) {
      char residual[32] = "-";
      if (std::isfinite(w.alignment_residual)) std::snprintf(residual, sizeof residual, "%.4f", w.alignment_residual);
      std::printf("%-10s  %-10s %6lld %6d %5d %8d %-16s %5d %14.4f %8.1f%% %7d %8.1f  %-22s %9s%s\n", w.as_of.iso().c_str(),
                  w.first_date.iso().c_str(), static_cast<long long>(w.periods), w.asset_count, w.excluded_count, w.factors,
                  w.termination.c_str(), w.iterations, w.log_likelihood, 100 * w.explained_total, w.heywood_count,
                  1000 * w.fit_seconds, w.alignment.c_str(), residual, w.stale ? "  stale" : "");
    }
    print_unusable_reasons(windows);
    std::printf("\nresidual: ||A R - B|| / ||B|| of the Procrustes alignment onto the reference (0: a perfect fit)\n");
    print_caution(std::cout);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch windows: %s\n", e.what());
    return kExitFailed;
  }
  return kExitOk;
}

}  // namespace factorwatch::server
