#include "residuals_command.h"

#include <cstdio>
#include <iostream>

#include "factor_returns_selection.h"
#include "factorwatch/pipeline/factor_returns_query.h"
#include "residuals_view.h"

namespace factorwatch::server {

CLI::App* add_residuals_command(CLI::App& app, ResidualsArguments& a) {
  CLI::App* command =
      app.add_subcommand("residuals", "One asset's residual (specific) returns over a window's dates");
  command->add_option("NAME", a.model, "Model name")->required();
  command->add_option("ASSET", a.asset, "Asset name")->required();
  command->add_option("--window", a.window, "The window ending on DATE, or the latest before it (default: the latest)")
      ->type_name("DATE");
  add_score_method_option(command, a.method);
  add_format_option(command, a.format);
  return command;
}

int run_residuals_command(const ResidualsArguments& a, const GlobalArguments& global) {
  auto db = open_database(global, "residuals");
  if (!db) return kExitFailed;
  try {
    std::optional<engine::Date> window;
    if (auto f = pipeline::read_date("window", a.window, window)) return report_failure("residuals", *f, a.model);
    pipeline::AssetResidualAnswer r;
    if (auto f = pipeline::find_asset_residuals(*db, a.model, a.asset, window, a.method, r))
      return report_failure("residuals", *f, a.model);
    if (a.format == "csv") std::cout << residuals_csv(r);
    else if (a.format == "json") std::cout << residuals_json(r).dump(2) << "\n";
    else {
      std::cout << residuals_table(r);
      print_caution(std::cout);
    }
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch residuals: %s\n", e.what());
    return kExitFailed;
  }
  return kExitOk;
}

}  // namespace factorwatch::server
