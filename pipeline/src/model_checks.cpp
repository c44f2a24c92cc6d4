#include "factorwatch/pipeline/model_checks.h"

#include "factorwatch/engine/factor_limit.h"
#include "factorwatch/storage/assets.h"

namespace factorwatch::pipeline {

std::optional<std::string> factors_warning(storage::Database& db, const storage::ModelConfig& config) {
  if (!config.universe.empty()) return std::nullopt;
  // Every stored asset is the most a window can hold; screening may drop some.
  const auto assets = static_cast<long long>(storage::list_assets(db).size());
  const std::string sample = "a window of the " + std::to_string(assets) + " stored asset" + (assets == 1 ? "" : "s") +
                             " and " + std::to_string(config.window) + " dates";
  const auto refused = engine::too_many_factors(config.fit.method, config.fit.factors, assets, config.window, sample);
  if (!refused) return std::nullopt;
  return engine::describe(*refused, refused->field) +
         "; until more assets are stored, every window will be stored as not usable";
}

}  // namespace factorwatch::pipeline
