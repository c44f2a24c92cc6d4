// Models and their windows as JSON and CSV: shared by `factorwatch model show`,
// `factorwatch windows` and the daemon. The windows list carries the caution (it shows
// fit statistics of risk models).
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "factorwatch/pipeline/model_standing.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/windows.h"

namespace factorwatch::server {

nlohmann::ordered_json windows_json(const storage::ModelVersion& model, const std::vector<storage::WindowSummary>& windows);
std::string windows_csv(const std::vector<storage::WindowSummary>& windows);

// One model: configuration, window count, stale count, latest as-of.
// With the model's standing: latest_stored_date, pending_windows and behind (a refresh
// would fit windows now).
nlohmann::ordered_json model_json(const storage::ModelVersion& model, const storage::WindowCounts& counts,
                                  const pipeline::ModelStanding& standing);
// "returns stored to 2025-12-31; up to date" or "...; 3 windows to fit: run factorwatch refresh NAME".
std::string standing_text(const std::string& model, const pipeline::ModelStanding& standing);

// Every model, one line each (name, version, method, factors, window, step, windows,
// latest as-of).
nlohmann::ordered_json models_json(storage::Database& db);
std::string models_csv(storage::Database& db);

}  // namespace factorwatch::server
