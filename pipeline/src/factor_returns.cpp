#include "factorwatch/pipeline/factor_returns.h"

#include <algorithm>
#include <cstdint>
#include <optional>

#include "factorwatch/pipeline/served_windows.h"
#include "factorwatch/storage/date_key.h"
#include "factorwatch/storage/returns_span.h"
#include "factorwatch/storage/windows.h"
#include "model_calendar.h"

namespace factorwatch::pipeline {
namespace {

using storage::Database;
using storage::WindowRecord;
using storage::WindowSummary;

// As in the refresh: a span holds at most this many as-of dates of a series, which bounds
// its memory by that many rows of the stored assets (250 x 5000 doubles = 10 MB).
constexpr std::size_t kDatesPerSpan = 250;

std::string unusable(const WindowRecord& w) {
  return "window " + w.as_of.iso() + " is not usable (" + engine::to_string(w.fit.termination) + ": " + w.fit.message + ")";
}

std::string no_window(std::optional<engine::Date> as_of, bool at_or_before) {
  if (!as_of) return "the model version has no window yet";
  return (at_or_before ? "no window at or before " : "no window with as-of date ") + as_of->iso();
}

// The stored returns of the window's dates and fitted assets, read as the refresh reads them.
engine::ReturnsPanel window_panel(Database& db, const WindowRecord& w) {
  const std::vector<std::int32_t> ids = storage::stored_asset_ids(db, w.fit.assets);
  engine::ReturnsPanel panel;
  if (ids.empty()) return panel;  // an empty universe would mean every stored asset
  const std::vector<engine::Date> dates = detail::window_dates(storage::stored_dates(db), w.first_date, w.as_of,
                                                               w.skipped_dates);
  const storage::ReturnsSpan span(db, w.first_date, w.as_of, ids, &dates);
  return span.window(0, span.dates().size());
}

struct ScoredWindow {
  std::string failure;
  std::optional<WindowRecord> window;
  engine::ReturnsPanel panel;
  engine::FactorScores scores;
};

ScoredWindow score_window(Database& db, long model_version_id, std::optional<engine::Date> as_of, engine::ScoreMethod method,
                          bool at_or_before) {
  ScoredWindow s;
  s.window = read_served_window(db, model_version_id, as_of, at_or_before);
  if (!s.window) {
    s.failure = no_window(as_of, at_or_before);
    return s;
  }
  if (!s.window->fit.IsSolutionUsable()) {
    s.failure = unusable(*s.window);
    return s;
  }
  s.panel = window_panel(db, *s.window);
  s.scores = engine::factor_scores(s.panel, s.window->fit, method);
  return s;
}

bool in_range(engine::Date as_of, std::optional<engine::Date> from, std::optional<engine::Date> to) {
  return (!from || as_of >= *from) && (!to || as_of <= *to);
}

}  // namespace

WindowScores window_scores(Database& db, long model_version_id, std::optional<engine::Date> as_of,
                           engine::ScoreMethod method,
                           bool at_or_before) {
  ScoredWindow s = score_window(db, model_version_id, as_of, method, at_or_before);
  WindowScores out;
  out.failure = s.failure;
  out.scores.method = method;
  if (s.window) {
    out.as_of = s.window->as_of;
    out.first_date = s.window->first_date;
  }
  if (out.ok()) out.scores = std::move(s.scores);
  return out;
}

// Why each row uses its own window's served (aligned) loadings and not one fixed set: the
// alignment rotates every window's factors onto its reference, so factor j keeps its
// meaning from one window to the next and the nightly scores form one comparable series,
// while each night is scored with the model that was current that night (no look-ahead).
FactorReturnSeries factor_return_series(Database& db, long model_version_id, std::optional<engine::Date> from,
                                        std::optional<engine::Date> to, engine::ScoreMethod method) {
  FactorReturnSeries series;
  series.method = method;
  std::vector<engine::Date> usable;
  for (const WindowSummary& w : storage::list_windows(db, model_version_id)) {
    if (!in_range(w.as_of, from, to)) continue;
    if (w.usable)
      usable.push_back(w.as_of);
    else
      series.skipped.push_back(
          {w.as_of, "not usable (" + w.termination + (w.reason.empty() ? "" : ": " + w.reason) + ")"});
  }
  // One span per run of up to kDatesPerSpan windows: every stored date between the first and
  // the last as-of date is read once, and no window reads its own. The span holds every
  // stored asset with returns in it (the union of the windows' assets is only known after
  // reading them); the engine ignores the columns a window did not fit.
  for (std::size_t chunk = 0; chunk < usable.size(); chunk += kDatesPerSpan) {
    const std::size_t end = std::min(usable.size(), chunk + kDatesPerSpan);
    const storage::ReturnsSpan span(db, usable[chunk], usable[end - 1], {});
    const std::vector<engine::Date>& dates = span.dates();
    for (std::size_t u = chunk; u < end; ++u) {
      const std::optional<WindowRecord> w = read_served_window(db, model_version_id, usable[u], false);
      if (!w) {  // replaced under us by a refit of another version: nothing to score
        series.skipped.push_back({usable[u], "the window is no longer stored"});
        continue;
      }
      const auto at = std::lower_bound(dates.begin(), dates.end(), w->as_of);
      if (at == dates.end() || *at != w->as_of) {
        series.skipped.push_back({w->as_of, "no stored returns on the as-of date"});
        continue;
      }
      const engine::ReturnsPanel day = span.window(static_cast<std::size_t>(at - dates.begin()), 1);
      const engine::FactorScores s = engine::factor_scores(day, w->fit, method);
      FactorReturnRow row;
      row.as_of = w->as_of;
      row.window_first_date = w->first_date;
      row.alignment = w->alignment ? w->alignment->status : "not aligned yet";
      row.scores = s.scores.row(0).transpose();
      row.assets_used = s.assets_used.front();
      if (!s.unscored.empty()) row.unscored_reason = s.unscored.front().reason;
      series.rows.push_back(std::move(row));
    }
  }
  std::sort(series.skipped.begin(), series.skipped.end(),
            [](const SkippedWindow& a, const SkippedWindow& b) { return a.as_of < b.as_of; });
  return series;
}

AssetResiduals asset_residuals(Database& db, long model_version_id, std::optional<engine::Date> as_of,
                               const std::string& asset,
                               engine::ScoreMethod method, bool at_or_before) {
  AssetResiduals out;
  out.asset = asset;
  out.method = method;
  std::optional<WindowRecord> window = read_served_window(db, model_version_id, as_of, at_or_before);
  if (!window) {
    out.failure = no_window(as_of, at_or_before);
    return out;
  }
  out.as_of = window->as_of;
  out.first_date = window->first_date;
  const engine::FactorFit& fit = window->fit;
  if (!fit.IsSolutionUsable()) {
    out.failure = unusable(*window);
    return out;
  }
  const auto found = std::find(fit.assets.begin(), fit.assets.end(), asset);
  if (found == fit.assets.end()) {
    out.failure = "asset '" + asset + "' is not in window " + window->as_of.iso() + ": no returns in the window";
    for (const engine::ExcludedAsset& e : fit.excluded)
      if (e.asset == asset) out.failure = "asset '" + asset + "' is not in window " + window->as_of.iso() + ": " + e.reason;
    return out;
  }
  const auto i = static_cast<Eigen::Index>(found - fit.assets.begin());
  const engine::ReturnsPanel panel = window_panel(db, *window);
  const engine::FactorScores scores = engine::factor_scores(panel, fit, method);
  const engine::ResidualReturns e = engine::residual_returns(panel, fit, scores, {asset});
  out.dates = e.dates;
  out.residuals = e.residuals.col(0);
  out.mean = fit.mean[i];
  out.loadings = fit.loadings.row(i).transpose();
  out.specific_variance = fit.specific_variance[i];
  return out;
}

}  // namespace factorwatch::pipeline
