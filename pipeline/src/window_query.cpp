#include "factorwatch/pipeline/window_query.h"

#include <stdexcept>
#include <unordered_map>

#include "factorwatch/pipeline/served_windows.h"
#include "factorwatch/storage/assets.h"

namespace factorwatch::pipeline {

std::string factor_name(Eigen::Index j) { return "f" + std::to_string(j + 1); }

nlohmann::ordered_json missing_json(const SelectedWindow& s) {
  nlohmann::ordered_json missing = nlohmann::ordered_json::array();
  for (const auto& m : s.missing) missing.push_back({{"asset", m.asset}, {"reason", m.reason}});
  return missing;
}

engine::Failure unknown_model(const std::string& name) {
  return engine::failure(engine::FailureKind::unknown_name, "model", "", "no model named '" + name + "'");
}

WindowPick pick_window(storage::Database& db, const WindowQuery& q) {
  WindowPick pick;
  const auto model = storage::find_model(db, q.model);
  if (!model) {
    pick.failure = unknown_model(q.model);
    return pick;
  }
  pick.model = *model;
  std::optional<storage::WindowStamp> stamp = storage::find_window_stamp(db, model->id, q.as_of, true);
  if (!stamp) {
    // Without a date there is nothing to name but the model. A refresh may store it (new
    // data, or a model never refreshed).
    pick.failure = engine::failure(engine::FailureKind::not_stored, q.as_of ? "as_of" : "", "",
                                   "model '" + q.model + "' has no window" +
                                       (q.as_of ? " on or before " + q.as_of->iso() : "") + " yet");
    pick.failure->refresh_helps = true;
    return pick;
  }
  if (!stamp->usable) {
    // A failed fit's numbers are no model to serve or measure with: serve the latest
    // usable window before it, saying which and why; fail only when there is none.
    const std::string why = "the window as of " + stamp->as_of.iso() + " has no usable fit (" + stamp->termination +
                            (stamp->reason.empty() ? "" : ": " + stamp->reason) + ")";
    std::optional<storage::WindowStamp> usable = storage::find_window_stamp(db, model->id, stamp->as_of, true, true);
    if (!usable) {
      pick.failure = engine::failure(engine::FailureKind::not_usable, "as_of", "",
                                     why + ", and no window before it has one");
      pick.stamp = std::move(*stamp);
      return pick;
    }
    pick.note = why + "; showing the latest usable window before it, as of " + usable->as_of.iso();
    stamp = std::move(usable);
  }
  pick.stamp = std::move(*stamp);
  return pick;
}

SelectedWindow read_picked_window(storage::Database& db, const WindowPick& pick, const WindowQuery& q) {
  SelectedWindow s;
  s.model = pick.model;
  auto window = read_served_window(db, pick.model.id, pick.stamp.as_of, false);
  if (!window) throw std::runtime_error("the window of " + pick.stamp.as_of.iso() + " was replaced while being read; ask again");
  // The pick was usable; a refit in between may have stored a failed fit in its place.
  if (!window->fit.IsSolutionUsable())
    throw std::runtime_error("the window of " + pick.stamp.as_of.iso() + " was refitted while being read, and the new fit "
                             "is not usable; ask again");
  s.window = std::move(*window);
  if (!pick.note.empty())
    s.note = pick.note;
  else if (q.as_of && s.window.as_of != *q.as_of)
    s.note = "no window ends on " + q.as_of->iso() + "; showing the latest before it, as of " + s.window.as_of.iso();
  const engine::FactorFit& fit = s.window.fit;
  if (q.assets.empty()) {
    s.rows.resize(fit.assets.size());
    for (std::size_t i = 0; i < fit.assets.size(); ++i) s.rows[i] = i;
    return s;
  }
  std::unordered_map<std::string, std::size_t> row_of;
  for (std::size_t i = 0; i < fit.assets.size(); ++i) row_of.emplace(fit.assets[i], i);
  std::unordered_map<std::string, std::string> excluded;
  for (const auto& e : fit.excluded) excluded.emplace(e.asset, e.reason);
  for (const std::string& name : q.assets) {
    if (auto r = row_of.find(name); r != row_of.end()) {
      s.rows.push_back(r->second);
    } else if (auto e = excluded.find(name); e != excluded.end()) {
      s.missing.push_back({name, "excluded from the fit: " + e->second});
    } else if (storage::has_asset(db, name)) {
      s.missing.push_back({name, "no returns in this window, or outside the model's universe"});
    } else {
      s.missing.push_back({name, "unknown asset (no returns stored)"});
    }
  }
  return s;
}

std::string factor_basis_text(const SelectedWindow& s) {
  std::string text = std::string("rotation ") + engine::to_string(s.model.config.rotation.method) + ", ";
  const auto& a = s.window.alignment;
  if (!a) return text + "not aligned yet";
  if (a->status != "aligned") return text + "alignment: " + a->status;
  return text + "aligned onto " + (a->reference_as_of ? a->reference_as_of->iso() : "the smoothed reference") +
         " (" + a->reference + ")";
}

engine::Frequency window_frequency(const SelectedWindow& s) {
  const auto periods = s.window.fit.periods;
  if (periods < 2) return {};
  const long days = engine::days_between(s.window.first_date, s.window.as_of);
  return engine::frequency_from_gap(static_cast<double>(days) / static_cast<double>(periods - 1));
}

}  // namespace factorwatch::pipeline
