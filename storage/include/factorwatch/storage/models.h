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

// Tighter than R's default 1e-5: the rotation of a window should not depend on where the
// criterion's slow tail happened to stop (the alignment would see that as drift).
inline constexpr double kRotationTolerance = 1e-10;
// The rotation options a model starts from: no rotation, Kaiser normalisation when one is
// chosen, kRotationTolerance.
engine::RotationOptions model_rotation();

struct ModelConfig {
  std::vector<std::string> universe;  // assets to fit; empty = every stored asset
  int window = 504;                   // dates (observations) per window
  int step = 1;                       // fit a window every `step` dates
  // The fit of every window: method, factors, basis, weighting (with its half-life in
  // dates), minimum coverage and tolerance are the model's; the rest of the engine's
  // options keep their defaults (the field table, model_fields.h, lists what a model sets).
  // The defaults are the engine's: one default for k.
  engine::FitOptions fit;
  std::optional<engine::Date> first_as_of;    // earliest as-of date to fit; none = as early as the data allow

  // Rotation of every window's loadings (method none, varimax or promax, with or without
  // Kaiser normalisation of the rows); its stopping rule is fixed (kRotationTolerance).
  engine::RotationOptions rotation = model_rotation();
  // What each window is aligned onto (orthogonal Procrustes on the shared assets): the
  // previous window (chained), one pinned window, or an exponentially weighted average of
  // the past aligned windows with this half-life in windows.
  AlignTo align_to = AlignTo::previous;
  std::optional<engine::Date> pinned_window;  // as-of date of the pinned window; none = the model's first window
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
  // The engine options of every window of this configuration (no warm start): `fit`, with
  // the half-life only under exponential weighting.
  engine::FitOptions fit_options() const;
  nlohmann::ordered_json to_json() const;
  // Throws std::runtime_error on a configuration that is not one of ours.
  static ModelConfig from_json(const nlohmann::json& j);
  // The minimum that applies: min_shared_assets, or the number of factors if larger (a
  // rotation is not determined by fewer rows than factors).
  int effective_min_shared_assets() const {
    return min_shared_assets > fit.factors ? min_shared_assets : fit.factors;
  }
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
