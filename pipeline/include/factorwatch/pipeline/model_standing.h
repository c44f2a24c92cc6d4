// Whether a model keeps up with the stored returns: a model behind the newest data serves
// yesterday's numbers without a word unless something says so. `model show`, GET
// /v1/models/{name} and /v1/health report it.
#pragma once

#include <cstddef>
#include <optional>

#include "factorwatch/engine/date.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/models.h"

namespace factorwatch::pipeline {

struct ModelStanding {
  std::optional<engine::Date> latest_stored;  // the newest stored date; none: no returns stored
  std::optional<engine::Date> latest_window;  // as-of date of the model's latest window; none: no window
  // Windows its grid holds on the stored dates that a refresh would fit now: new dates
  // and stale windows (refresh.h). Dates not yet completing a step are not pending.
  std::size_t pending = 0;
  bool behind() const { return pending > 0; }
};

// Reads the model's plan as a refresh would make it (one pass over the stored dates' asset
// counts: milliseconds for the demo universe), without fitting.
ModelStanding model_standing(storage::Database& db, const storage::ModelVersion& model);

}  // namespace factorwatch::pipeline
