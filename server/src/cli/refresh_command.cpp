#include "refresh_command.h"

#include <cstdio>
#include <iostream>
#include <stdexcept>

#include "factorwatch/pipeline/model_standing.h"
#include "factorwatch/pipeline/refresh.h"
#include "factorwatch/pipeline/served_windows.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/windows.h"

namespace factorwatch::server {
namespace {

// One line rewritten in place: windows done / total, rate, time left.
void show_progress(const std::string& model, const pipeline::RefreshProgress& p) {
  const double rate = p.elapsed_seconds > 0 ? p.done / p.elapsed_seconds : 0;
  const double left = rate > 0 ? (p.total - p.done) / rate : 0;
  std::fprintf(stderr, "\rrefreshing %s: %zu/%zu windows, %.1f windows/s, %.0f s left, as of %s   ", model.c_str(),
               p.done, p.total, rate, left, engine::iso_or_empty(p.as_of).c_str());
  if (p.done == p.total) std::fprintf(stderr, "\n");
  std::fflush(stderr);
}

// ": <reason>" after the count of unusable windows (the first one's, when reasons differ).
std::string unusable_why(const pipeline::RefreshSummary& s) {
  if (s.unusable == 0 || s.unusable_reason.empty()) return "";
  return (s.unusable_reasons_differ ? ": the first: " : ": ") + s.unusable_reason;
}

int refresh_one(storage::Database& db, const std::string& name, bool progress) {
  const pipeline::RefreshSummary s = pipeline::refresh_model(
      db, name, progress ? pipeline::RefreshCallback([&name](const pipeline::RefreshProgress& p) { show_progress(name, p); })
                         : pipeline::RefreshCallback());
  std::printf("%s (version %d): ", s.model.c_str(), s.version);
  if (s.fitted == 0) {
    std::printf("nothing to fit: %s (%zu windows current)\n", s.note.c_str(), s.already_current);
  } else {
    std::printf("%zu window%s fitted, as of %s .. %s (%zu were stale, %zu already current), %zu unusable%s\n", s.fitted,
                s.fitted == 1 ? "" : "s", engine::iso_or_empty(s.first_as_of).c_str(), engine::iso_or_empty(s.last_as_of).c_str(), s.refitted_stale,
                s.already_current, s.unusable, unusable_why(s).c_str());
    std::printf("  %.2f s: reading %.2f s, fitting %.2f s, writing %.2f s (%.1f windows/s)\n", s.seconds,
                s.read_seconds, s.fit_seconds, s.write_seconds, s.fitted / s.seconds);
  }
  // The second pass: every window needing it aligned onto its reference and compared.
  std::printf("  %zu window%s aligned, %zu drift alert%s raised (%.2f s)%s\n", s.aligned, s.aligned == 1 ? "" : "s",
              s.alerts, s.alerts == 1 ? "" : "s", s.align_seconds,
              s.alerts > 0 ? "; factorwatch alerts shows them" : "");
  const auto model = storage::find_model(db, name);
  // Nothing fitted and no date stored after the latest window: the night's file brought
  // nothing new (load exits 3 then); said here too, for the log of a nightly run.
  if (s.fitted == 0) {
    const pipeline::ModelStanding standing = pipeline::model_standing(db, *model);
    if (standing.latest_window && standing.latest_stored && *standing.latest_stored <= *standing.latest_window)
      std::printf("  no new date: nothing is stored after the latest window, %s; the feed has not moved on\n",
                  standing.latest_window->iso().c_str());
  }
  if (const auto latest = pipeline::read_served_window(db, model->id, std::nullopt)) {
    const engine::FactorFit& f = latest->fit;
    if (!f.IsSolutionUsable()) {
      std::printf("  latest window %s .. %s: no usable fit (%s: %s)%s\n", latest->first_date.iso().c_str(),
                  latest->as_of.iso().c_str(), engine::to_string(f.termination), f.message.c_str(),
                  latest->stale ? " (stale)" : "");
    } else {
      std::printf("  latest window %s .. %s: %zu assets (%zu excluded), %d factors explain %.1f%% of the variance, %s after %d iterations%s\n",
                  latest->first_date.iso().c_str(), latest->as_of.iso().c_str(), f.assets.size(), f.excluded.size(), f.factors,
                  100 * f.explained_total, engine::to_string(f.termination), f.iterations, latest->stale ? " (stale)" : "");
    }
  }
  return s.unusable > 0 ? kExitFailed : kExitOk;
}

}  // namespace

CLI::App* add_refresh_command(CLI::App& app, RefreshArguments& a) {
  CLI::App* refresh = app.add_subcommand("refresh", "Fit every window not yet stored, or stale, up to the latest date");
  refresh->add_option("NAME", a.model, "Model to refresh (default: every model)");
  refresh->add_flag("--quiet", a.quiet, "No progress line");
  return refresh;
}

int run_refresh_command(const RefreshArguments& a, const GlobalArguments& global) {
  auto db = open_database(global, "refresh");
  if (!db) return kExitFailed;
  std::vector<std::string> names;
  if (!a.model.empty()) {
    if (!storage::find_model(*db, a.model)) {
      std::fprintf(stderr, "factorwatch refresh: no model named '%s' (factorwatch model list shows them)\n", a.model.c_str());
      return kExitBadInput;
    }
    names.push_back(a.model);
  } else {
    for (const auto& m : storage::list_models(*db)) names.push_back(m.name);
    if (names.empty()) {
      std::fprintf(stderr, "factorwatch refresh: no models yet; define one with: factorwatch model set NAME\n");
      return kExitBadInput;
    }
  }
  int code = kExitOk;
  for (const std::string& name : names) {
    try {
      if (refresh_one(*db, name, !a.quiet && stderr_is_terminal()) != kExitOk) code = kExitFailed;
    } catch (const std::exception& e) {
      std::fprintf(stderr, "\nfactorwatch refresh %s: %s\n", name.c_str(), e.what());
      code = kExitFailed;
    }
  }
  print_caution(std::cout);
  return code;
}

}  // namespace factorwatch::server
