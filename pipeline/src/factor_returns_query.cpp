#include "factorwatch/pipeline/factor_returns_query.h"

#include <algorithm>
#include <stdexcept>

#include "factorwatch/storage/assets.h"

namespace factorwatch::pipeline {
namespace {

QueryFailure parse_method(const std::string& text, engine::ScoreMethod& method) {
  if (text.empty()) {
    method = engine::ScoreMethod::bartlett;
    return std::nullopt;
  }
  const auto parsed = engine::parse_score_method(text);
  if (!parsed) return engine::failure(engine::FailureKind::bad_input, "method", text, "must be bartlett or regression");
  method = *parsed;
  return std::nullopt;
}

// The window of a one-window request, read in its served form. The date was checked
// before, so the pick fails only for want of a model or a window.
QueryFailure select_window(storage::Database& db, const WindowQuery& q, SelectedWindow& out) {
  const WindowPick pick = pick_window(db, q);
  if (pick.failure) {
    engine::Failure f = *pick.failure;
    if (f.field == "as_of") f.field = "window";  // what these requests call the window's date
    if (f.kind == engine::FailureKind::bad_input || f.kind == engine::FailureKind::not_stored) f.value = engine::iso_or_empty(q.as_of);
    // A refresh helps a model without windows; a date before the first window it does not.
    if (f.kind == engine::FailureKind::not_stored) f.refresh_helps = storage::count_windows(db, pick.model.id).windows == 0;
    return f;
  }
  try {
    out = read_picked_window(db, pick, q);
  } catch (const std::runtime_error& e) {  // replaced by a refit between the two reads
    return engine::failure(engine::FailureKind::not_stored, "window", engine::iso_or_empty(q.as_of), e.what());
  }
  return std::nullopt;
}

}  // namespace

std::string factor_returns_description(engine::ScoreMethod method) {
  return method == engine::ScoreMethod::bartlett
             ? "factor returns (Bartlett weighted least squares scores of the centred returns)"
             : "factor returns (regression / Thomson scores of the centred returns, shrunk towards zero)";
}

std::string series_basis_text(const storage::ModelConfig& c) {
  std::string reference;
  switch (c.align_to) {
    case storage::AlignTo::previous: reference = "the previous window"; break;
    case storage::AlignTo::pinned: reference = "the pinned window"; break;
    case storage::AlignTo::smoothed: reference = "the smoothed reference"; break;
  }
  return std::string("rotation ") + engine::to_string(c.rotation.method) + ", each window aligned onto " + reference;
}

Eigen::Index series_factor_columns(const FactorReturnSeriesAnswer& a) {
  Eigen::Index k = a.model.config.fit.factors;
  for (const FactorReturnRow& r : a.series.rows) k = std::max(k, r.scores.size());
  return k;
}

QueryFailure find_factor_return_series(storage::Database& db, const RangeQuery& q, const std::string& method_text,
                                       FactorReturnSeriesAnswer& out) {
  engine::ScoreMethod method{};
  if (auto f = parse_method(method_text, method)) return f;
  if (auto f = reversed_range(q)) return f;
  const auto model = storage::find_model(db, q.model);
  if (!model) return unknown_model(q.model);
  out.model = *model;
  out.from = q.from;
  out.to = q.to;
  out.series = factor_return_series(db, out.model.id, q.from, q.to, method);
  return std::nullopt;
}

QueryFailure find_window_factor_returns(storage::Database& db, const std::string& model,
                                        std::optional<engine::Date> window, const std::string& method_text,
                                        WindowFactorReturns& out) {
  engine::ScoreMethod method{};
  if (auto f = parse_method(method_text, method)) return f;
  if (auto f = select_window(db, WindowQuery{model, window, {}}, out.window)) return f;
  WindowScores s = window_scores(db, out.window.model.id, out.window.window.as_of, method, false);
  if (!s.ok()) return engine::failure(engine::FailureKind::not_stored, "window", engine::iso_or_empty(window), s.failure);
  out.scores = std::move(s.scores);
  return std::nullopt;
}

QueryFailure find_asset_residuals(storage::Database& db, const std::string& model, const std::string& asset,
                                  std::optional<engine::Date> window, const std::string& method_text,
                                  AssetResidualAnswer& out) {
  engine::ScoreMethod method{};
  if (auto f = parse_method(method_text, method)) return f;
  if (asset.empty()) return engine::failure(engine::FailureKind::bad_input, "asset", asset, "name the asset");
  if (!storage::find_model(db, model)) return unknown_model(model);
  if (!storage::has_asset(db, asset))
    return engine::failure(engine::FailureKind::unknown_name, "asset", asset, "unknown asset (no returns stored)");
  if (auto f = select_window(db, WindowQuery{model, window, {asset}}, out.window)) return f;
  if (!out.window.missing.empty())
    return engine::failure(engine::FailureKind::unknown_name, "asset", asset,
                   "not in the window as of " + out.window.window.as_of.iso() + ": " + out.window.missing.front().reason);
  out.residuals = asset_residuals(db, out.window.model.id, out.window.window.as_of, asset, method, false);
  if (!out.residuals.ok())
    return engine::failure(engine::FailureKind::not_stored, "window", engine::iso_or_empty(window), out.residuals.failure);
  return std::nullopt;
}

}  // namespace factorwatch::pipeline
