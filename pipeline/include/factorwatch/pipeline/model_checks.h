// What a model's definition can only be judged against with the stored data: a model over
// every stored asset whose factors exceed what a window of those assets identifies. Not a
// refusal (more assets may be loaded later), a warning each surface shows.
#pragma once

#include <optional>
#include <string>

#include "factorwatch/storage/database.h"
#include "factorwatch/storage/models.h"

namespace factorwatch::pipeline {

// "factors = 40: a window of the 30 stored assets and 252 dates identifies at most 22
// factors by maximum likelihood (Ledermann bound); ...", or nullopt when the factors are
// identified, or when the universe is an explicit list (model set refuses those itself).
std::optional<std::string> factors_warning(storage::Database& db, const storage::ModelConfig& config);

}  // namespace factorwatch::pipeline
