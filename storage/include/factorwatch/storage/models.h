// Models: a name and a configuration, versioned. Changing a model's configuration adds a
// new version; windows stay tied to the version they were fitted with, so yesterday's
// numbers keep the configuration that produced them.
#pragma once

#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "factorwatch/engine/fit.h"
#include "factorwatch/storage/database.h"

namespace factorwatch::storage {

struct ModelConfig {
  std::vector<std::string> universe;  // assets to fit; empty = every stored asset
  int window = 504;                   // dates (observations) per window
  int step = 1;                       // fit a window every `step` dates
  engine::Method method = engine::Method::max_likelihood;
  int factors = 5;
  engine::Basis basis = engine::Basis::covariance;
  engine::Weighting weighting = engine::Weighting::equal;
  double half_life = 0;               // dates; only with EWMA weighting
  double min_coverage = 0.8;          // share of a window's dates an asset needs
  std::string first_as_of;            // earliest as-of date to fit; "" = as early as the data allow

  // True when usable; otherwise *error names the field (as the CLI spells it) and the rule.
  bool IsValid(std::string* error) const;
  // The engine options of every window of this configuration (no warm start).
  engine::FitOptions fit_options() const;
  nlohmann::ordered_json to_json() const;
  // Throws std::runtime_error on a configuration that is not one of ours.
  static ModelConfig from_json(const nlohmann::json& j);
  std::string hash() const;  // fingerprint of the canonical JSON
};

struct ModelVersion {
  long id = 0;  // of this version (windows refer to it)
  std::string name;
  int version = 0;
  ModelConfig config;
  std::string configuration_hash;
  std::string created_at;
};

struct SetModelOutcome {
  ModelVersion model;
  bool created = false;      // the name was new
  bool new_version = false;  // false: the configuration equals the current version's
};

// Names: 1-64 characters from letters, digits, '.', '_' and '-'.
bool valid_model_name(const std::string& name, std::string* error);

// Throws std::invalid_argument for a bad name or configuration.
SetModelOutcome set_model(Database& db, const std::string& name, const ModelConfig& config);
// The current (latest) version; nullopt when there is no such model.
std::optional<ModelVersion> find_model(Database& db, const std::string& name);
std::vector<ModelVersion> list_models(Database& db);

// A universe list: one asset per line; blank lines and lines starting with '#' are
// skipped; a single header line "asset" is allowed. Throws InputError.
std::vector<std::string> read_universe_file(const std::string& path);

}  // namespace factorwatch::storage
