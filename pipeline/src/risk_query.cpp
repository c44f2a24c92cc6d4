#include "factorwatch/pipeline/risk_query.h"

#include <cmath>

#include "factorwatch/storage/assets.h"
#include "factorwatch/storage/timestamps.h"

namespace factorwatch::pipeline {
namespace {

RiskOutcome refused(engine::Failure failure) {
  RiskOutcome out;
  out.failure = std::move(failure);
  return out;
}

RiskOutcome failed(engine::FailureKind kind, std::string field, std::string rule) {
  return refused(engine::failure(kind, std::move(field), "", std::move(rule)));
}

void add_note(std::string& notes, const std::string& note) {
  if (!note.empty()) notes += (notes.empty() ? "" : "; ") + note;
}

// The engine knows why the window lacks an asset from the fit alone (excluded, and the
// reason; or simply absent); the database tells a name it has returns for (outside the
// model's universe, or without returns in the window) from one it has never seen.
void explain_not_modelled(storage::Database& db, engine::PortfolioRisk& risk) {
  for (engine::NotModelled& m : risk.not_modelled) {
    if (m.reason != engine::kNotInWindow) m.reason = "excluded from the fit: " + m.reason;
    else if (storage::has_asset(db, m.asset)) m.reason = "no returns in this window, or outside the model's universe";
    else m.reason = "unknown asset (no returns stored)";
  }
}

// Every figure a surface shows, except the shares: a share is NaN by definition when
// nothing is at risk (risk.h), and a non-finite total already shows there.
bool figures_finite(const engine::PortfolioRisk& r) {
  auto figure = [](const engine::RiskFigure& f) {
    return std::isfinite(f.variance) && std::isfinite(f.volatility) && std::isfinite(f.annualised_variance) &&
           std::isfinite(f.annualised_volatility);
  };
  const engine::WeightSummary& ws = r.weights;
  bool ok = figure(r.total) && figure(r.systematic) && figure(r.specific) && r.exposures.allFinite() &&
            std::isfinite(r.specific_volatility_contribution) && std::isfinite(ws.net) && std::isfinite(ws.gross) &&
            std::isfinite(ws.long_weight) && std::isfinite(ws.short_weight) && std::isfinite(ws.modelled_net) &&
            std::isfinite(ws.modelled_gross) && std::isfinite(ws.not_modelled_gross);
  for (const engine::FactorContribution& f : r.by_factor)
    ok = ok && std::isfinite(f.exposure) && std::isfinite(f.variance) && std::isfinite(f.volatility);
  for (const engine::AssetContribution& a : r.by_asset)
    ok = ok && std::isfinite(a.variance) && std::isfinite(a.systematic_variance) &&
         std::isfinite(a.specific_variance) && std::isfinite(a.marginal) && std::isfinite(a.volatility);
  return ok;
}

// Weights within the bound of a holdings file (storage::kLargestWeight) always give finite
// figures; weights stored by an older version (no bound then), or sums of large ones, may
// not. A book that cannot be measured, or whose figures overflow, is refused naming its
// weights (`field`), rather than shown as nulls.
std::optional<engine::Failure> measure(storage::Database& db, const WindowRiskModel& w, std::string role,
                                       std::string name, std::optional<engine::Date> as_of,
                                       const engine::Holdings& holdings,
                                       const std::string& field, RiskReport& report) {
  if (auto f = engine::weights_failure(holdings, field)) return f;
  RiskBook book{std::move(role), std::move(name), as_of, engine::portfolio_risk(w.risk, holdings)};
  if (!figures_finite(book.risk))
    return engine::failure(engine::FailureKind::rejected, field, "",
                           "the risk figures of the " + book.role + " book" +
                               (book.name.empty() ? "" : " '" + book.name + "'") +
                               " overflow (they are not finite numbers): its weights are too large; weights are "
                               "fractions of the book or amounts of money, each at most 1e15 in absolute value");
  explain_not_modelled(db, book.risk);
  report.books.push_back(std::move(book));
  return std::nullopt;
}

// A stored portfolio's holdings at or before `as_of` (none = the latest); when none are that
// old, the earliest stored, with a note saying so. nullopt when the name has none at all.
std::optional<storage::Portfolio> holdings_near(storage::Database& db, const std::string& name,
                                                std::optional<engine::Date> as_of, std::string& notes) {
  if (auto p = storage::read_portfolio(db, name, as_of)) return p;
  const auto dates = storage::portfolio_dates(db, name);
  if (dates.empty()) return std::nullopt;
  add_note(notes, "'" + name + "' has no holdings at or before " + engine::iso_or_empty(as_of) +
                      "; using its earliest, as of " + dates.front().iso());
  return storage::read_portfolio(db, name, dates.front());
}

}  // namespace

std::shared_ptr<const WindowRiskModel> load_window_risk_model(storage::Database& db, const WindowPick& pick) {
  const SelectedWindow s = read_picked_window(db, pick, WindowQuery{pick.model.name, pick.stamp.as_of, {}});
  auto w = std::make_shared<WindowRiskModel>();
  w->model = s.model;
  w->as_of = s.window.as_of;
  w->first_date = s.window.first_date;
  w->stale = s.window.stale;
  w->basis = factor_basis_text(s);
  w->frequency = window_frequency(s);
  // The pick refused a failed fit, and read_picked_window one stored in between.
  w->risk = engine::RiskModel(s.window.fit, w->frequency.periods_per_year);
  return w;
}

RiskOutcome answer_risk(storage::Database& db, const RiskRequest& q, const WindowPick& pick,
                        std::shared_ptr<const WindowRiskModel> window_model) {
  if (pick.failure) return refused(*pick.failure);

  // The window first: the holdings date may follow from it.
  RiskOutcome out;
  RiskReport& report = out.report;
  report.window = window_model ? std::move(window_model) : load_window_risk_model(db, pick);
  const WindowRiskModel& w = *report.window;
  if (!pick.note.empty())
    add_note(report.note, pick.note);
  else if (q.window.as_of && w.as_of != *q.window.as_of)
    add_note(report.note, "no window ends on " + q.window.as_of->iso() + "; using the latest before it, as of " +
                              w.as_of.iso());

  // The portfolio's holdings, and which benchmark it is measured against.
  engine::Holdings holdings;
  std::optional<engine::Date> portfolio_as_of;
  std::string benchmark_name = q.benchmark;
  const std::optional<engine::Date> holdings_date = q.portfolio_as_of ? q.portfolio_as_of
                                                    : q.window.as_of  ? std::optional<engine::Date>(w.as_of)
                                                                      : std::nullopt;
  if (q.holdings) {
    holdings = *q.holdings;
  } else {
    const auto stored = !q.portfolio_as_of ? holdings_near(db, q.portfolio, holdings_date, report.note)
                                           : storage::read_portfolio(db, q.portfolio, q.portfolio_as_of);
    if (!stored) {
      const bool has_dates = q.portfolio_as_of && !storage::portfolio_dates(db, q.portfolio).empty();
      return failed(engine::FailureKind::unknown_name, has_dates ? "holdings_as_of" : "portfolio",
                    has_dates ? "portfolio '" + q.portfolio + "' has no holdings at or before " +
                                    engine::iso_or_empty(q.portfolio_as_of)
                              : "no portfolio named '" + q.portfolio + "'");
    }
    holdings = stored->holdings;
    portfolio_as_of = stored->as_of;
    if (benchmark_name.empty() && !q.benchmark_holdings && !q.no_benchmark) benchmark_name = stored->benchmark;
  }
  std::optional<engine::Holdings> benchmark = q.benchmark_holdings;
  std::optional<engine::Date> benchmark_as_of;
  if (!benchmark && !benchmark_name.empty() && !q.no_benchmark) {
    const auto stored =
        holdings_near(db, benchmark_name, portfolio_as_of ? portfolio_as_of : holdings_date, report.note);
    if (!stored)
      return failed(engine::FailureKind::unknown_name, "benchmark",
                    q.benchmark.empty() ? "portfolio '" + q.portfolio + "' names '" + benchmark_name +
                                              "' as its benchmark, but no portfolio by that name is stored; store "
                                              "it, or leave the benchmark out"
                                        : "no portfolio named '" + benchmark_name + "' to serve as the benchmark");
    benchmark = stored->holdings;
    benchmark_as_of = stored->as_of;
  }

  // Stored holdings were checked when stored, and weights sent with the request by the
  // surface; what fails here is, say, a sum overflowing, or weights stored by an older
  // version. Name the set of weights: sent ones by their member, stored ones by name.
  const std::string field = q.holdings ? "weights" : "portfolio";
  const std::string name = q.holdings ? "" : q.portfolio;
  const std::string benchmark_field = q.benchmark_holdings ? "benchmark_weights" : "benchmark";
  if (auto f = measure(db, w, "portfolio", name, portfolio_as_of, holdings, field, report)) return refused(*f);
  if (benchmark) {
    if (auto f = measure(db, w, "benchmark", benchmark_name, benchmark_as_of, *benchmark, benchmark_field, report))
      return refused(*f);
    if (auto f = measure(db, w, "active", "", std::nullopt, engine::active_weights(holdings, *benchmark), benchmark_field, report))
      return refused(*f);
  }
  if (q.trade) {
    const engine::Holdings after = engine::apply_trade(holdings, *q.trade);
    if (auto f = measure(db, w, "after_trade", name, portfolio_as_of, after, "trade", report)) return refused(*f);
    if (benchmark)
      if (auto f = measure(db, w, "active_after_trade", "", std::nullopt, engine::active_weights(after, *benchmark), "trade",
                           report))
        return refused(*f);
  }
  return out;
}

const RiskBook* find_book(const RiskReport& report, const std::string& role) {
  for (const RiskBook& b : report.books)
    if (b.role == role) return &b;
  return nullptr;
}

}  // namespace factorwatch::pipeline
