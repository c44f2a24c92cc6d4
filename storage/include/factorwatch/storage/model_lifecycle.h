// Ending a model's life, or part of it: deleting a model with everything fitted for it,
// pruning the versions a change of configuration superseded, and renaming.
//
// Each runs in one transaction: a model is deleted whole or not at all. What goes with a
// model version: its windows and, through them, their alignments, drift rows and alerts.
// Stored returns and portfolios belong to no model and stay.
#pragma once

#include <cstddef>
#include <optional>
#include <string>

#include "factorwatch/storage/database.h"

namespace factorwatch::storage {

struct RemovedModelData {
  std::size_t versions = 0;  // model versions deleted
  std::size_t windows = 0;   // their windows (alignments, drift and alerts went with them)
};

// Deletes the model and every version of it; nullopt when there is no model of that name.
std::optional<RemovedModelData> delete_model(Database& db, const std::string& name);

// Deletes every version of the model but the current one (windows of a configuration that
// is no longer the model's: no refresh refits them and no read serves them); nullopt when
// there is no model of that name. Versions keep their numbers: the next change is the
// current version plus one.
std::optional<RemovedModelData> prune_model(Database& db, const std::string& name);

// Gives the model (every version and window) a new name. False when there is no model
// named `from`; throws std::invalid_argument when `to` is not a valid name or is taken.
bool rename_model(Database& db, const std::string& from, const std::string& to);

}  // namespace factorwatch::storage
