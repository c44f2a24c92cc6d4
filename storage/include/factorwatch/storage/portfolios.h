// Named portfolios and benchmarks: weights per asset with an as-of date.
//
// A holdings file is CSV with the header `asset,weight` (one row per asset) or JSON
// ({"as_of": "yyyy-mm-dd", "benchmark": "name", "weights": {"ASSET": 0.1, ...}} or
// "holdings": [{"asset": "ASSET", "weight": 0.1}, ...]). Weights may be negative (short)
// and need not add up to one (the sums are reported). Every problem throws InputError
// naming the file, the line and the field, and nothing is stored.
//
// A name keeps one set of holdings per as-of date: setting the same name and date again
// replaces that date's holdings; other dates stay. Any portfolio can serve as another's
// benchmark; a portfolio may name its usual benchmark.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "factorwatch/engine/risk.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/date_key.h"

namespace factorwatch::storage {

struct Portfolio {
  std::string name;
  engine::Date as_of;     // the date the holdings are for
  std::string benchmark;  // name of its usual benchmark; "" = none
  engine::Holdings holdings;  // in file order, each asset once
  std::string source;     // the file (or "HTTP upload") the holdings came from
  std::string content_sha256;  // of the holdings as stored (asset, weight) and the benchmark, for change detection
  std::string stored_at;  // UTC; "" before it is stored
};

// What to read from a holdings file besides the holdings. The as-of date and benchmark
// given here (from the command line or a query string) win over the file's own; with
// neither, the as-of date is today's (UTC) and there is no benchmark.
struct PortfolioFileOptions {
  std::string name;        // required: letters, digits, '-', '_', '.', at most 64
  std::optional<engine::Date> as_of;  // none = the file's as_of (JSON), else today
  std::string benchmark;   // "" = the file's benchmark (JSON), else none
};

// The largest weight accepted, in absolute value: 1e15. Weights are fractions of the
// book's value or amounts of money (risk scales with them, docs/api.md), so the bound must
// let a holding of any real size through in any currency: the largest single holdings are
// a few times 1e10 US dollars, about 1e14 in the currencies with the smallest units. Above
// 1e15 a weight is an input error (a unit slip, 1e308 typed for a test), and below it the
// risk figures cannot overflow: a variance is at most (sum of |w|)^2 times the largest
// return variance, far inside the range of a double even for a million holdings.
inline constexpr double kLargestWeight = 1e15;

// The problem with a weight, as words to follow "the weight" ("is not a finite number",
// "is beyond +-1e15, ..."), or "" when it is usable (finite, |w| <= kLargestWeight).
std::string weight_problem(double weight);

// True when `name` can name a portfolio (the same rule as model names).
bool is_portfolio_name(const std::string& name);

// Reads a holdings file; CSV or JSON by content (a first non-blank character '{' is JSON).
// Throws InputError (path, line, field) for any problem, std::invalid_argument for bad options.
Portfolio read_portfolio_file(const std::string& path, const PortfolioFileOptions& options);
// The same from text in memory (an HTTP body); `label` stands for the path in errors.
Portfolio parse_portfolio_text(const std::string& text, const std::string& label,
                               const PortfolioFileOptions& options);

struct SavePortfolioOutcome {
  bool created = false;    // the name was new
  bool replaced = false;   // the name already had holdings for this as-of date, and they differed
  bool unchanged = false;  // the same holdings (and benchmark) were already stored for this date
  std::size_t unknown_assets = 0;  // holdings whose asset the database has no returns for
};

// Stores the holdings in one transaction (all or nothing).
SavePortfolioOutcome save_portfolio(Database& db, const Portfolio& portfolio);

// The holdings of `name` for the latest as-of date, or the latest at or before `as_of`.
std::optional<Portfolio> read_portfolio(Database& db, const std::string& name,
                                        std::optional<engine::Date> as_of = std::nullopt);

struct PortfolioSummary {
  std::string name;
  engine::Date latest_as_of;
  std::size_t dates = 0;  // how many as-of dates are stored
  std::string benchmark;  // of the latest as-of date
  std::size_t holdings = 0;  // of the latest as-of date
  double net = 0, gross = 0;  // of the latest as-of date
  std::string stored_at;  // of the latest as-of date
};
std::vector<PortfolioSummary> list_portfolios(Database& db);

// The as-of dates stored for a name, ascending.
std::vector<engine::Date> portfolio_dates(Database& db, const std::string& name);

// Removes every as-of date of the name (or only `as_of`); returns how many dates went.
std::size_t delete_portfolio(Database& db, const std::string& name,
                             std::optional<engine::Date> as_of = std::nullopt);

}  // namespace factorwatch::storage
