// Answering "how risky is this book in this window?" for the CLI and the daemon alike:
// the model and window (latest, or at or before a date), the portfolio (stored by name, or
// weights sent with the request), its benchmark (stored, sent, or the portfolio's usual
// one) and an optional trade; engine::portfolio_risk on each book. Failures are values
// naming the input at fault (engine/failure.h); each surface adds its own hint.
#pragma once

#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "factorwatch/engine/failure.h"
#include "factorwatch/engine/frequency.h"
#include "factorwatch/engine/risk.h"
#include "factorwatch/pipeline/window_query.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/portfolios.h"

namespace factorwatch::pipeline {

// One window's factors made ready for risk queries (asset index built): what the daemon
// keeps between requests, keyed by the window's stamp.
struct WindowRiskModel {
  storage::ModelVersion model;
  engine::Date as_of, first_date;
  bool stale = false;
  std::string basis;      // the served factors in words: "rotation none, aligned onto 2026-11-30 (previous)"
  engine::Frequency frequency;
  engine::RiskModel risk;
};

// Reads the picked window and builds its risk model.
std::shared_ptr<const WindowRiskModel> load_window_risk_model(storage::Database& db, const WindowPick& pick);

struct RiskRequest {
  WindowQuery window;              // model and as-of; its assets are not used
  // The portfolio: a stored name, or weights. A stored portfolio's holdings are those at or
  // before `portfolio_as_of`; without it, those at or before the window's date when the
  // request names a window date (the book as it stood then), else the latest. A stored
  // benchmark is read at or before the portfolio's holdings date. Where no holdings are
  // that old, the earliest stored are used, with a note.
  std::string portfolio;
  std::optional<engine::Date> portfolio_as_of;
  std::optional<engine::Holdings> holdings;
  // The benchmark: a stored name, or weights; neither = the portfolio's usual benchmark.
  std::string benchmark;
  std::optional<engine::Holdings> benchmark_holdings;
  bool no_benchmark = false;       // ignore the portfolio's usual benchmark
  std::optional<engine::Holdings> trade;  // weight changes for a what-if
};

// One set of weights measured against the window.
struct RiskBook {
  std::string role;   // portfolio | benchmark | active | after_trade | active_after_trade
  std::string name;   // the stored portfolio's name, or "" for weights sent with the request
  std::optional<engine::Date> as_of;  // the holdings' as-of date (none for weights sent with the request)
  engine::PortfolioRisk risk;
};

struct RiskReport {
  std::shared_ptr<const WindowRiskModel> window;
  std::string note;  // e.g. no window ends on the date asked for; "; " between notes
  std::vector<RiskBook> books;  // portfolio first; benchmark and active when there is one; then the trade's
};

// The report, or why there is none. The failure's field names the input: "model",
// "as_of", "portfolio", "holdings_as_of", "benchmark", "weights", "benchmark_weights",
// "trade" (surfaces spell them their own way). Kinds: an unknown model, portfolio or
// benchmark is unknown_name; a malformed date is bad_input; no window at the date is
// not_stored; a failed fit not_usable; weights whose figures overflow are rejected.
struct RiskOutcome {
  std::optional<engine::Failure> failure;
  RiskReport report;
};

// `window_model` is the risk model of `pick` when the caller has one at hand (the daemon's
// cache); nullptr reads it.
RiskOutcome answer_risk(storage::Database& db, const RiskRequest& request, const WindowPick& pick,
                        std::shared_ptr<const WindowRiskModel> window_model);

// The books in the order every surface shows them.
const RiskBook* find_book(const RiskReport& report, const std::string& role);

}  // namespace factorwatch::pipeline
