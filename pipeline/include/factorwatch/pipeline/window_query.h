// Finding the window a one-window request is about, for the CLI and the daemon alike:
// the model, the window (the latest, or the latest at or before an as-of date) and the
// assets (all, or a list in the order given, with a reason for each one the window does
// not hold). Failures are engine::Failure values; each surface names the field its own
// way and adds its own hint.
#pragma once

#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "factorwatch/engine/failure.h"
#include "factorwatch/engine/frequency.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/windows.h"

namespace factorwatch::pipeline {

struct WindowQuery {
  std::string model;
  std::optional<engine::Date> as_of;  // none = the latest window
  std::vector<std::string> assets;  // empty = every fitted asset
};

// Which window, without reading its matrices: enough to key a cache.
struct WindowPick {
  // Why there is none: an unknown model (field "model"), an as-of date that is not a date
  // (bad input, "as_of"), no window stored at or before it (not stored; "as_of" when a
  // date was given), or no usable window at or before it (not usable, "as_of"; `stamp`
  // names the failed one).
  std::optional<engine::Failure> failure;
  storage::ModelVersion model;
  // The window served: the latest at or before the date asked for whose fit is usable.
  storage::WindowStamp stamp;
  // When a later window's fit failed and an earlier one is served: which failed, why, and
  // which is shown (every surface shows it; part of a cache key).
  std::string note;
};

struct MissingAsset {
  std::string asset;
  std::string reason;
};

struct SelectedWindow {
  storage::ModelVersion model;
  storage::WindowRecord window;
  std::vector<std::size_t> rows;  // into window.fit.assets, in output order
  std::vector<MissingAsset> missing;
  std::string note;               // e.g. the as-of date asked for has no window of its own
};

WindowPick pick_window(storage::Database& db, const WindowQuery& query);

// The failure for a model name the database does not hold (field "model").
engine::Failure unknown_model(const std::string& name);

// Reads the picked window and selects the assets. Throws std::runtime_error when the
// window vanished in between (replaced by a refit under a new model version), or was
// replaced by a fit that is not usable.
SelectedWindow read_picked_window(storage::Database& db, const WindowPick& pick, const WindowQuery& query);

// JSON list of the assets asked for that the window does not hold, with the reason.
nlohmann::ordered_json missing_json(const SelectedWindow& s);

// "f1", "f2", ...
std::string factor_name(Eigen::Index j);

// The basis the factors are served in: "rotation varimax, aligned onto 2025-12-30
// (previous)" and the like.
std::string factor_basis_text(const SelectedWindow& s);

// The data's frequency, inferred from the window's dates (daily, weekly or monthly).
engine::Frequency window_frequency(const SelectedWindow& s);

}  // namespace factorwatch::pipeline
