#include "factorwatch/pipeline/refresh.h"

#include <algorithm>
#include <chrono>
#include <iterator>
#include <optional>
#include <set>
#include <stdexcept>

#include "align_windows.h"
#include "model_calendar.h"
#include "factorwatch/engine/build_info.h"
#include "factorwatch/engine/rotation.h"
#include "factorwatch/engine/window_products.h"
#include "factorwatch/storage/date_key.h"
#include "factorwatch/storage/returns_span.h"
#include "factorwatch/storage/windows.h"
#include "refresh_hooks.h"

namespace factorwatch::pipeline {
namespace {

using storage::Database;
using storage::ModelConfig;
using storage::ModelVersion;
using storage::WindowRecord;

using Clock = std::chrono::steady_clock;

double since(Clock::time_point t) { return std::chrono::duration<double>(Clock::now() - t).count(); }

// A span holds at most this many windows, which bounds its memory by
// (windows + W) x assets doubles (250 + 504 dates x 5000 assets = 30 MB).
constexpr std::size_t kWindowsPerSpan = 250;

struct GridPoint {
  std::size_t index;  // of the as-of date in the stored dates
  engine::Date as_of;
};

// The model version's grid on the stored dates: an as-of date every `step` dates, from
// the first date at which a whole window is stored (and not before first_as_of). Once the
// version has windows, the grid is anchored at its earliest one (`anchor`): the points are
// the anchor and every `step`-th stored date after it, so that loading older history,
// which adds dates before the anchor, neither moves the grid nor fits windows before the
// first one (that would change the model's first, and pinned, window and re-chain every
// alignment after it: refresh.h, "The grid").
std::vector<GridPoint> grid(const std::vector<engine::Date>& dates, const ModelConfig& config,
                            std::optional<engine::Date> anchor) {
  std::vector<GridPoint> points;
  const auto window = static_cast<std::size_t>(config.window);
  std::size_t first = window - 1;
  if (anchor)
    first = std::max(first, static_cast<std::size_t>(std::lower_bound(dates.begin(), dates.end(), *anchor) - dates.begin()));
  for (std::size_t i = first; i < dates.size(); i += static_cast<std::size_t>(config.step))
    if (anchor || !config.first_as_of || dates[i] >= *config.first_as_of) points.push_back({i, dates[i]});
  return points;
}

// The stored dates, the model's grid on them, and which grid windows still need a fit
// (none stored, or stale), from one read of the model version's windows.
struct Plan {
  std::vector<engine::Date> stored;  // every stored date
  std::vector<engine::Date> dates;   // the model's calendar (model_calendar.h): its windows' dates
  std::vector<GridPoint> points;
  std::vector<std::size_t> pending;  // positions in `points`
  std::set<engine::Date> stale;      // as-of dates of stored windows marked stale
};

// The model's universe as stored asset ids (ascending); empty for every stored asset.
std::vector<std::int32_t> universe_ids(Database& db, const ModelConfig& config) {
  return storage::stored_asset_ids(db, config.universe);
}

Plan make_plan(Database& db, const ModelVersion& model) {
  Plan plan;
  const std::vector<std::int32_t> universe = universe_ids(db, model.config);
  const std::vector<storage::DateCount> counts = storage::stored_date_counts(db, universe);
  for (const storage::DateCount& c : counts) plan.stored.push_back(c.date);
  // A universe none of whose assets is stored has no dates (fit_pending says why).
  if (model.config.universe.empty() || !universe.empty()) plan.dates = detail::calendar_of(counts);
  std::set<engine::Date> current;
  std::optional<engine::Date> anchor;  // the version's earliest window
  for (const storage::WindowState& w : storage::window_states(db, model.id)) {
    (w.stale ? plan.stale : current).insert(w.as_of);
    if (!anchor || w.as_of < *anchor) anchor = w.as_of;
  }
  plan.points = grid(plan.dates, model.config, anchor);
  for (std::size_t p = 0; p < plan.points.size(); ++p)
    if (!current.count(plan.points[p].as_of)) plan.pending.push_back(p);
  return plan;
}

engine::WarmStart warm_from(const engine::FactorFit& fit) {
  return {fit.assets, fit.loadings, fit.specific_variance};
}

}  // namespace

std::vector<engine::Date> pending_windows(Database& db, const ModelVersion& model) {
  const Plan plan = make_plan(db, model);
  std::vector<engine::Date> out;
  for (std::size_t p : plan.pending) out.push_back(plan.points[p].as_of);
  return out;
}

namespace {

// A load may insert dates inside the range a refresh is fitting (a late file): the plan's
// grid no longer matches the stored dates, and the refresh plans again from them. A
// bound on how often, so that a stream of such loads cannot keep a refresh from ending
// (the windows written so far are kept; the next refresh carries on).
constexpr int kMaxReplans = 3;

enum class Pass { done, replan };

// The first pass: fit the pending windows (see refresh.h).
Pass fit_pending(Database& db, const ModelVersion& m, const RefreshCallback& progress, const std::atomic<bool>* stop,
                 Clock::time_point start, detail::FittedWindows& fitted, RefreshSummary& summary);

RefreshSummary fit_windows(Database& db, const std::string& name, const RefreshCallback& progress,
                           const std::atomic<bool>* stop, Clock::time_point start, detail::FittedWindows& fitted) {
  const std::optional<ModelVersion> model = storage::find_model(db, name);
  if (!model) throw std::invalid_argument("no model named '" + name + "' (define it with: factorwatch model set " + name + ")");
  RefreshSummary summary;
  summary.model = model->name;
  summary.version = model->version;
  for (int replans = 0; fit_pending(db, *model, progress, stop, start, fitted, summary) == Pass::replan; ++replans) {
    if (replans == kMaxReplans) {
      summary.note = "the stored dates kept changing during the refresh (loads of earlier dates); " +
                     std::to_string(summary.fitted) + " windows written; the next refresh carries on";
      break;
    }
  }
  if (summary.changed_during > 0 && summary.note.empty())
    summary.note = std::to_string(summary.changed_during) +
                   " windows were fitted on returns a load changed during this run: stored stale; the next refresh "
                   "refits them";
  summary.seconds = since(start);
  return summary;
}

Pass fit_pending(Database& db, const ModelVersion& m, const RefreshCallback& progress, const std::atomic<bool>* stop,
                 Clock::time_point start, detail::FittedWindows& fitted, RefreshSummary& summary) {
  const ModelVersion* model = &m;
  const ModelConfig& config = model->config;
  const Plan plan = make_plan(db, *model);
  const std::vector<engine::Date>& dates = plan.dates;
  const std::vector<std::int32_t> universe = universe_ids(db, config);
  if (!config.universe.empty() && universe.empty())
    throw std::invalid_argument("model '" + model->name + "': none of its " + std::to_string(config.universe.size()) +
                                " universe assets has stored returns");
  if (dates.size() < static_cast<std::size_t>(config.window)) {
    if (dates.size() == plan.stored.size())
      summary.note = std::to_string(dates.size()) + " dates stored, fewer than the window of " +
                     std::to_string(config.window) + ": nothing to fit yet";
    else
      summary.note = std::to_string(plan.stored.size()) + " dates stored, of which " + std::to_string(dates.size()) +
                     " are in the model's calendar (enough of its universe traded), fewer than the window of " +
                     std::to_string(config.window) + ": nothing to fit yet";
    return Pass::done;
  }
  const std::vector<GridPoint>& points = plan.points;
  const std::vector<std::size_t>& pending = plan.pending;
  const bool first_plan = summary.grid_windows == 0 && summary.fitted == 0;
  summary.grid_windows = points.size();
  if (first_plan) summary.already_current = points.size() - pending.size();
  if (pending.empty()) {
    if (summary.fitted == 0) summary.note = "every window is current";
    return Pass::done;
  }

  const engine::FitOptions base = config.fit_options();
  const engine::RotationOptions rotation = config.rotation;
  const auto window = static_cast<std::size_t>(config.window);
  std::optional<engine::FactorFit> previous;  // the fit of the grid point before the next one
  // Date-by-date products carried from each window to the next (window_products.h): a
  // window one date later computes one new row of them instead of all.
  engine::WindowProducts products;
  std::size_t previous_point = static_cast<std::size_t>(-1);

  for (std::size_t chunk = 0; chunk < pending.size(); chunk += kWindowsPerSpan) {
    const std::size_t chunk_end = std::min(pending.size(), chunk + kWindowsPerSpan);
    const std::size_t first_row = points[pending[chunk]].index + 1 - window;
    const std::size_t last_row = points[pending[chunk_end - 1]].index;
    if (detail::refresh_hooks().before_read) detail::refresh_hooks().before_read();
    auto t_read = Clock::now();
    const storage::ReturnsSpan span(db, dates[first_row], dates[last_row], universe, &dates);
    summary.read_seconds += since(t_read);
    if (detail::refresh_hooks().after_read) detail::refresh_hooks().after_read();
    // Windows are cut from the span by position in the plan's dates: both must be the
    // same, and so must the stored dates the plan's calendar was drawn from.
    const auto stored_from = std::lower_bound(plan.stored.begin(), plan.stored.end(), dates[first_row]);
    const auto stored_to = std::upper_bound(stored_from, plan.stored.end(), dates[last_row]);
    if (!std::equal(span.dates().begin(), span.dates().end(), dates.begin() + static_cast<std::ptrdiff_t>(first_row),
                    dates.begin() + static_cast<std::ptrdiff_t>(last_row) + 1) ||
        span.dates().size() != last_row + 1 - first_row ||
        !std::equal(span.stored_dates().begin(), span.stored_dates().end(), stored_from, stored_to))
      return Pass::replan;

    for (std::size_t k = chunk; k < chunk_end; ++k) {
      if (stop && stop->load()) {
        summary.stopped = true;
        summary.note = "stopped on request after " + std::to_string(summary.fitted) + " of " +
                       std::to_string(pending.size()) + " windows; the next refresh carries on";
        return Pass::done;
      }
      const std::size_t p = pending[k];
      const GridPoint& point = points[p];
      const auto t_window = Clock::now();
      engine::FitOptions options = base;
      options.products = &products;
      // Warm start from the grid point before this one: in memory when this run fitted
      // it, else as stored (identical numbers either way).
      if (p > 0) {
        if (previous_point != p - 1) {
          previous.reset();
          if (auto stored = read_window(db, model->id, points[p - 1].as_of, false))
            previous = std::move(stored->fit);
        }
        if (previous && previous->IsSolutionUsable()) options.warm_start = warm_from(*previous);
      }
      t_read = Clock::now();
      const std::size_t begin = point.index + 1 - window - first_row;
      const engine::ReturnsPanel panel = span.window(begin, window);
      WindowRecord record;
      record.input_hash = storage::panel_fingerprint(panel);
      const std::uint64_t input_rows = span.rows_digest(begin, window);
      summary.read_seconds += since(t_read);  // cutting the window and fingerprinting it
      record.as_of = point.as_of;
      record.first_date = panel.dates.front();
      // The stored dates inside the window that its calendar left out, kept with it so the
      // window's returns can be read again exactly (factor_returns.h).
      {
        const auto from = std::lower_bound(plan.stored.begin(), plan.stored.end(), record.first_date);
        const auto to = std::upper_bound(from, plan.stored.end(), record.as_of);
        std::set_difference(from, to, panel.dates.begin(), panel.dates.end(), std::back_inserter(record.skipped_dates));
      }
      record.configuration_hash = model->configuration_hash;
      record.provenance = engine::build_info();
      const auto t_fit = Clock::now();
      record.fit = engine::fit(panel, options);
      if (config.rotation.method != engine::RotationMethod::none && record.fit.IsSolutionUsable())
        record.rotation = engine::rotate_fit_loadings(record.fit.standardized_loadings(), rotation).matrix;
      summary.fit_seconds += since(t_fit);
      if (!record.fit.IsSolutionUsable()) {
        if (summary.unusable++ == 0) summary.unusable_reason = record.fit.message;
        else if (record.fit.message != summary.unusable_reason) summary.unusable_reasons_differ = true;
      }
      if (plan.stale.count(point.as_of)) ++summary.refitted_stale;

      const auto t_write = Clock::now();
      record.total_seconds = since(t_window);
      if (!storage::save_window(db, model->id, record, input_rows)) ++summary.changed_during;
      summary.write_seconds += since(t_write);

      ++summary.fitted;
      if (!summary.first_as_of) summary.first_as_of = record.as_of;
      summary.last_as_of = record.as_of;
      fitted.keep(record.as_of, record);
      previous = std::move(record.fit);
      previous_point = p;
      if (progress) progress({summary.fitted, pending.size(), record.as_of, since(start)});
    }
  }
  return Pass::done;
}

}  // namespace

detail::RefreshHooks& detail::refresh_hooks() {
  static RefreshHooks hooks;
  return hooks;
}

RefreshSummary refresh_model(Database& db, const std::string& name, const RefreshCallback& progress,
                             const std::atomic<bool>* stop) {
  const auto start = Clock::now();
  detail::FittedWindows fitted;  // this run's fits, handed to the second pass instead of reading them back
  RefreshSummary summary = fit_windows(db, name, progress, stop, start, fitted);
  if (summary.stopped) return summary;
  // The second pass: alignment and drift of every window that needs it (the new ones, and
  // all after a refitted one), also when no window needed a fit.
  const detail::AlignmentRun run = detail::align_windows(db, *storage::find_model(db, name), stop, &fitted);
  summary.aligned = run.aligned;
  summary.alerts = run.alerts;
  summary.align_seconds = run.seconds;
  if (run.stopped) {
    summary.stopped = true;
    summary.note = "stopped on request after aligning " + std::to_string(run.aligned) +
                   " windows; the next refresh carries on";
  }
  summary.seconds = since(start);
  return summary;
}

}  // namespace factorwatch::pipeline
