// Models: a name and a configuration, versioned. Changing a model's configuration adds a
// new version; windows stay tied to the version they were fitted with, so yesterday's
// numbers keep the configuration that produced them.
#pragma once

#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "factorwatch/engine/fit.h"
#include "factorwatch/engine/rotation.h"
#include "factorwatch/storage/database.h"

namespace factorwatch::storage {

enum class AlignTo { previous, pinned, smoothed };
const char* to_string(AlignTo a);  // "previous", "pinned", "smoothed"
std::optional<AlignTo> parse_align_to(const std::string& s);

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
  // Where the iterative fits stop (engine::FitOptions::tolerance): ML, the largest scaled
  // gradient of the log-likelihood; principal axis, the largest change of a communality.
  double tolerance = engine::FitOptions{}.tolerance;

  // Rotation of every window's loadings (none, varimax, promax), with or without Kaiser
  // normalisation of the rows.
  engine::RotationMethod rotation = engine::RotationMethod::none;
  bool kaiser_normalize = true;
  // What each window is aligned onto (orthogonal Procrustes on the shared assets): the
  // previous window (chained), one pinned window, or an exponentially weighted average of
  // the past aligned windows with this half-life in windows.
  AlignTo align_to = AlignTo::previous;
  std::string pinned_window;          // as-of date of the pinned window; "" = the model's first window
  double smoothing_half_life = 20;    // windows; only with align_to smoothed
  // Fewer shared assets than this (or than the number of factors, whichever is larger) and
  // a window is left as fitted, with a status saying why.
  int min_shared_assets = 20;
  // Drift alerts; 0 turns one off. Bands of Lorenzo-Seva and ten Berge (2006): congruence
  // 0.95 or more, the same factor; 0.85 to 0.95, fair similarity; below 0.85, not the same.
  // Against the previous window, which shares all but `step` dates, every window where a
  // factor's congruence is below alert_below is flagged: an abrupt break. Against the
  // pinned window, a factor is flagged when its congruence falls below alert_below_pinned
  // (once, not again in each later window that stays below): a gradual change, which is
  // what a rolling window makes even of a sudden change in the data, shows there. Its
  // default sits at the lower band because windows far apart differ by sampling noise
  // alone (docs/methodology.md, "Drift alerts", has the demo's figures).
  double alert_below = 0.95;
  double alert_below_pinned = 0.85;

  // The first rule the configuration breaks, naming the member as to_json spells it
  // ("min_coverage"; "universe" for the asset list); nullopt when usable. Each surface
  // spells the field its own way.
  std::optional<engine::Failure> FirstFailure() const;
  // The engine options of every window of this configuration (no warm start).
  engine::FitOptions fit_options() const;
  nlohmann::ordered_json to_json() const;
  // Throws std::runtime_error on a configuration that is not one of ours.
  static ModelConfig from_json(const nlohmann::json& j);
  // The minimum that applies: min_shared_assets, or the number of factors if larger (a
  // rotation is not determined by fewer rows than factors).
  int effective_min_shared_assets() const { return min_shared_assets > factors ? min_shared_assets : factors; }
  // The rotation options of every window of this configuration.
  engine::RotationOptions rotation_options() const;
  // Fingerprint of the canonical JSON. Members added after schema 4 (rotation, tolerance and on)
  // enter it only when they differ from their defaults, so a model defined before they
  // existed keeps its hash, its version and its windows.
  std::string hash() const;
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
