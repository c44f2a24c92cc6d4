#include "portfolio_command.h"

#include <cstdio>
#include <iostream>
#include <stdexcept>

#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/portfolios.h"
#include "cli_failure.h"
#include "factorwatch/pipeline/request_dates.h"
#include "portfolio_views.h"

namespace factorwatch::server {
namespace {

// --as-of read once here; false after saying why it is not a date (and, for `set`, that
// nothing was stored).
bool read_as_of(const PortfolioArguments& a, const char* command, std::optional<engine::Date>& as_of) {
  const auto f = pipeline::read_date("as_of", a.as_of, as_of);
  if (f)
    std::fprintf(stderr, "factorwatch %s: %s\n%s", command, cli_text(*f).c_str(),
                 std::string(command) == "portfolio set" ? "Nothing was stored.\n" : "");
  return !f;
}

int run_portfolio_set(const PortfolioArguments& a, storage::Database& db) {
  std::optional<engine::Date> as_of;
  if (!read_as_of(a, "portfolio set", as_of)) return kExitBadInput;
  storage::Portfolio portfolio;
  try {
    portfolio = storage::read_portfolio_file(a.path, {a.name, as_of, a.benchmark});
  } catch (const storage::InputError& e) {
    std::fprintf(stderr, "factorwatch portfolio set: %s\nThe file was rejected; the database is unchanged.\n", e.what());
    return kExitBadInput;
  } catch (const std::invalid_argument& e) {
    std::fprintf(stderr, "factorwatch portfolio set: %s\nNothing was stored.\n", e.what());
    return kExitBadInput;
  }
  const storage::SavePortfolioOutcome outcome = storage::save_portfolio(db, portfolio);
  const bool benchmark_missing = !portfolio.benchmark.empty() && !storage::read_portfolio(db, portfolio.benchmark);
  const std::string note = "benchmark '" + portfolio.benchmark +
                           "' is not stored yet: risk needs it (factorwatch portfolio set " + portfolio.benchmark +
                           " FILE)";
  if (a.format == "json") {
    nlohmann::ordered_json j = stored_portfolio_json(portfolio, outcome);
    if (benchmark_missing) j["note"] = note;
    std::cout << j.dump(2) << "\n";
  } else {
    std::cout << stored_portfolio_text(portfolio, outcome);
    if (benchmark_missing) std::cout << "  note: " << note << "\n";
  }
  return kExitOk;
}

int run_portfolio_list(const PortfolioArguments& a, storage::Database& db) {
  const auto portfolios = storage::list_portfolios(db);
  if (a.format == "json") {
    std::cout << portfolio_list_json(portfolios).dump(2) << "\n";
  } else if (a.format == "csv") {
    std::cout << portfolio_list_csv(portfolios);
  } else if (portfolios.empty()) {
    std::printf("no portfolios; store one with: factorwatch portfolio set NAME FILE\n");
  } else {
    std::printf("%-24s %-10s %6s %-20s %9s %10s %10s\n", "name", "as of", "dates", "benchmark", "holdings", "net",
                "gross");
    for (const auto& p : portfolios)
      std::printf("%-24s %-10s %6zu %-20s %9zu %10.4g %10.4g\n", p.name.c_str(), p.latest_as_of.iso().c_str(), p.dates,
                  p.benchmark.empty() ? "-" : p.benchmark.c_str(), p.holdings, p.net, p.gross);
  }
  return kExitOk;
}

int run_portfolio_show(const PortfolioArguments& a, storage::Database& db) {
  std::optional<engine::Date> as_of;
  if (!read_as_of(a, "portfolio show", as_of)) return kExitBadInput;
  const auto p = storage::read_portfolio(db, a.name, as_of);
  if (!p) {
    std::fprintf(stderr, "factorwatch portfolio show: no portfolio named '%s'%s (factorwatch portfolio list shows them)\n",
                 a.name.c_str(), as_of ? (" at or before " + as_of->iso()).c_str() : "");
    return kExitBadInput;
  }
  if (a.format == "json") {
    std::cout << portfolio_json(*p, storage::portfolio_dates(db, a.name)).dump(2) << "\n";
  } else if (a.format == "csv") {
    std::cout << portfolio_csv(*p);
  } else {
    std::printf("portfolio %s, as of %s (stored %s from %s)%s%s\n", p->name.c_str(), p->as_of.iso().c_str(),
                p->stored_at.c_str(), p->source.c_str(), p->benchmark.empty() ? "" : "; benchmark ",
                p->benchmark.c_str());
    std::printf("%-24s %14s\n", "asset", "weight");
    double net = 0;
    for (const auto& h : p->holdings) {
      std::printf("%-24s %14.6g\n", table_text(h.asset).c_str(), h.weight);
      net += h.weight;
    }
    std::printf("%zu holdings, net weight %.6g\n", p->holdings.size(), net);
  }
  return kExitOk;
}

int run_portfolio_delete(const PortfolioArguments& a, storage::Database& db) {
  std::optional<engine::Date> as_of;
  if (!read_as_of(a, "portfolio delete", as_of)) return kExitBadInput;
  const std::size_t removed = storage::delete_portfolio(db, a.name, as_of);
  if (removed == 0) {
    std::fprintf(stderr, "factorwatch portfolio delete: no portfolio named '%s'%s; nothing removed\n", a.name.c_str(),
                 as_of ? (" with holdings as of " + as_of->iso()).c_str() : "");
    return kExitBadInput;
  }
  std::printf("portfolio %s: removed %zu as-of date%s\n", a.name.c_str(), removed, removed == 1 ? "" : "s");
  return kExitOk;
}

}  // namespace

CLI::App* add_portfolio_command(CLI::App& app, PortfolioArguments& a) {
  CLI::App* portfolio = app.add_subcommand("portfolio", "Store, list, show and remove portfolios and benchmarks");
  portfolio->require_subcommand(1);
  a.set = portfolio->add_subcommand("set", "Store a portfolio's holdings (CSV asset,weight or JSON) for an as-of date");
  a.set->add_option("NAME", a.name, "Portfolio name")->required();
  a.set->add_option("FILE", a.path, "Holdings file: CSV with the header asset,weight, or JSON")
      ->required()
      ->type_name("FILE");
  a.set->add_option("--as-of", a.as_of, "Date the holdings are for (default: the file's as_of, else today, UTC)")
      ->type_name("DATE");
  a.set->add_option("--benchmark", a.benchmark, "The portfolio's usual benchmark (another stored portfolio)")
      ->type_name("NAME");
  a.set->add_option("--format", a.format, "Output: table or json")->check(CLI::IsMember({"table", "json"}))
      ->capture_default_str();
  a.list = portfolio->add_subcommand("list", "Stored portfolios with their latest holdings' sums");
  add_format_option(a.list, a.format);
  a.show = portfolio->add_subcommand("show", "One portfolio's holdings");
  a.show->add_option("NAME", a.name, "Portfolio name")->required();
  a.show->add_option("--as-of", a.as_of, "Holdings as of this date, or the latest before it (default: the latest)")
      ->type_name("DATE");
  add_format_option(a.show, a.format);
  a.remove = portfolio->add_subcommand("delete", "Remove a portfolio (every as-of date, or one)");
  a.remove->add_option("NAME", a.name, "Portfolio name")->required();
  a.remove->add_option("--as-of", a.as_of, "Remove only the holdings of this date")->type_name("DATE");
  return portfolio;
}

int run_portfolio_command(const PortfolioArguments& a, const GlobalArguments& global) {
  auto db = open_database(global, "portfolio");
  if (!db) return kExitFailed;
  try {
    if (a.set->parsed()) return run_portfolio_set(a, *db);
    if (a.list->parsed()) return run_portfolio_list(a, *db);
    if (a.show->parsed()) return run_portfolio_show(a, *db);
    if (a.remove->parsed()) return run_portfolio_delete(a, *db);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch portfolio: %s\n", e.what());
    return kExitFailed;
  }
  return kExitBadInput;
}

}  // namespace factorwatch::server
