#include "factor_returns_command.h"

#include <cstdio>
#include <iostream>

#include "factor_returns_selection.h"
#include "factor_returns_view.h"
#include "factorwatch/pipeline/factor_returns_query.h"

namespace factorwatch::server {

CLI::App* add_factor_returns_command(CLI::App& app, FactorReturnsArguments& a) {
  CLI::App* command = app.add_subcommand(
      "factor-returns", "Factor returns: each window's factor values on its as-of date, or every date of one window");
  command->add_option("NAME", a.model, "Model name")->required();
  command->add_option("--window", a.window,
                      "Every date of this window (ending on DATE, or the latest before it) instead of the series")
      ->type_name("DATE");
  add_date_range_options(command, a.from, a.to);
  add_score_method_option(command, a.method);
  add_format_option(command, a.format);
  return command;
}

int run_factor_returns_command(const FactorReturnsArguments& a, const GlobalArguments& global) {
  if (!a.window.empty() && (!a.from.empty() || !a.to.empty())) {
    std::fprintf(stderr, "factorwatch factor-returns: option '--window' shows one window; leave out --from and --to\n");
    return kExitBadInput;
  }
  auto db = open_database(global, "factor-returns");
  if (!db) return kExitFailed;
  try {
    if (!a.window.empty()) {
      std::optional<engine::Date> window;
      if (auto f = pipeline::read_date("window", a.window, window)) return report_failure("factor-returns", *f, a.model);
      pipeline::WindowFactorReturns w;
      if (auto f = pipeline::find_window_factor_returns(*db, a.model, window, a.method, w))
        return report_failure("factor-returns", *f, a.model);
      if (a.format == "csv") std::cout << window_factor_returns_csv(w);
      else if (a.format == "json") std::cout << window_factor_returns_json(w).dump(2) << "\n";
      else {
        std::cout << window_factor_returns_table(w);
        print_caution(std::cout);
      }
      return kExitOk;
    }
    pipeline::RangeQuery range;
    if (auto f = read_range(a.model, a.from, a.to, range)) return report_failure("factor-returns", *f, a.model);
    pipeline::FactorReturnSeriesAnswer s;
    if (auto f = pipeline::find_factor_return_series(*db, range, a.method, s))
      return report_failure("factor-returns", *f, a.model);
    if (a.format == "csv") std::cout << factor_return_series_csv(s);
    else if (a.format == "json") std::cout << factor_return_series_json(s).dump(2) << "\n";
    else {
      std::cout << factor_return_series_table(s);
      print_caution(std::cout);
    }
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch factor-returns: %s\n", e.what());
    return kExitFailed;
  }
  return kExitOk;
}

}  // namespace factorwatch::server
