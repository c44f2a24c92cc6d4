#include "risk_command.h"

#include <cstdio>
#include <iostream>
#include <stdexcept>

#include "cli_failure.h"
#include "factorwatch/pipeline/risk_query.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/portfolios.h"
#include "risk_view.h"

namespace factorwatch::server {
namespace {

// A holdings file read for one query only (the weights, or a trade's weight changes).
engine::Holdings read_holdings(const std::string& path) {
  return storage::read_portfolio_file(path, {"unstored", std::nullopt, ""}).holdings;
}

}  // namespace

CLI::App* add_risk_command(CLI::App& app, RiskArguments& a) {
  CLI::App* risk = app.add_subcommand(
      "risk", "A portfolio's systematic and specific risk, exposures and contributions in a stored window");
  risk->add_option("MODEL", a.model, "Model name")->required();
  auto* portfolio = risk->add_option("PORTFOLIO", a.portfolio, "Stored portfolio (factorwatch portfolio list)");
  auto* weights = risk->add_option("--weights", a.weights_path, "Measure this holdings file instead, without storing it")
                      ->type_name("FILE");
  portfolio->excludes(weights);
  risk->add_option("--as-of", a.as_of, "Window ending on this date, or the latest before it (default: the latest)")
      ->type_name("DATE");
  risk->add_option("--holdings-as-of", a.holdings_as_of,
                   "The portfolio's holdings as of this date, or the latest before it (default: the latest)")
      ->type_name("DATE");
  auto* benchmark = risk->add_option("--benchmark", a.benchmark,
                                     "Active risk against this stored portfolio (default: the portfolio's own benchmark)")
                        ->type_name("NAME");
  risk->add_flag("--no-benchmark", a.no_benchmark, "Leave out the portfolio's usual benchmark")->excludes(benchmark);
  risk->add_option("--trade", a.trade_path, "What-if: weight changes (CSV asset,weight or JSON); risk before and after")
      ->type_name("FILE");
  add_format_option(risk, a.format);
  risk->add_option("--limit", a.limit, "Table: assets shown per book, largest contributions first (0: all)")
      ->type_name("N")
      ->capture_default_str();
  risk->add_flag("--no-assets", a.no_assets, "CSV and JSON: leave out the rows of single assets");
  return risk;
}

int run_risk_command(const RiskArguments& a, const GlobalArguments& global) {
  if (a.portfolio.empty() && a.weights_path.empty()) {
    std::fprintf(stderr, "factorwatch risk: name a stored PORTFOLIO or give --weights FILE\n");
    return kExitBadInput;
  }
  pipeline::RiskRequest q;
  q.window.model = a.model;
  if (auto f = pipeline::read_date("as_of", a.as_of, q.window.as_of)) return report_failure("risk", *f, a.model);
  q.portfolio = a.portfolio;
  if (auto f = pipeline::read_date("holdings_as_of", a.holdings_as_of, q.portfolio_as_of))
    return report_failure("risk", *f, a.model);
  q.benchmark = a.benchmark;
  q.no_benchmark = a.no_benchmark;
  try {
    if (!a.weights_path.empty()) q.holdings = read_holdings(a.weights_path);
    if (!a.trade_path.empty()) q.trade = read_holdings(a.trade_path);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch risk: %s\n", e.what());
    return kExitBadInput;
  }
  auto db = open_database(global, "risk");
  if (!db) return kExitFailed;
  try {
    const pipeline::WindowPick pick = pipeline::pick_window(*db, q.window);
    const pipeline::RiskOutcome outcome = pipeline::answer_risk(*db, q, pick, nullptr);
    if (outcome.failure) return report_failure("risk", *outcome.failure, a.model);
    const RiskViewOptions view{!a.no_assets, a.limit};
    if (a.format == "csv") std::cout << risk_csv(outcome.report, view);
    else if (a.format == "json") std::cout << risk_json(outcome.report, view).dump(2) << "\n";
    else std::cout << risk_table(outcome.report, view);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch risk: %s\n", e.what());
    return kExitFailed;
  }
  return kExitOk;
}

}  // namespace factorwatch::server
