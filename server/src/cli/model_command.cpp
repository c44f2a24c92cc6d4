#include "model_command.h"

#include <algorithm>
#include <cstdio>
#include <iostream>
#include <stdexcept>

#include "factorwatch/storage/assets.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/windows.h"
#include "cli_failure.h"
#include "drift_selection.h"
#include "model_views.h"

namespace factorwatch::server {
namespace {

std::string describe(const storage::ModelConfig& c) {
  std::string universe = c.universe.empty() ? "all stored assets" : std::to_string(c.universe.size()) + " listed assets";
  char text[512];
  std::snprintf(text, sizeof text,
                "  universe:      %s\n  window:        %d dates, a new window every %d date%s\n"
                "  method:        %s, %d factors, %s basis\n  weighting:     %s\n  min coverage:  %.2f\n"
                "  first as-of:   %s\n",
                universe.c_str(), c.window, c.step, c.step == 1 ? "" : "s", engine::to_string(c.method), c.factors,
                engine::to_string(c.basis),
                c.weighting == engine::Weighting::ewma ? ("exponential, half-life " + std::to_string(c.half_life) + " dates").c_str()
                                                       : "equal",
                c.min_coverage, c.first_as_of.empty() ? "as early as the data allow" : c.first_as_of.c_str());
  std::string out = text;
  out += "  rotation:      " + std::string(engine::to_string(c.rotation));
  if (c.rotation != engine::RotationMethod::none)
    out += c.kaiser_normalize ? " (rows Kaiser-normalised)" : " (without Kaiser normalisation)";
  out += "\n  aligned onto:  ";
  switch (c.align_to) {
    case storage::AlignTo::previous: out += "the previous window"; break;
    case storage::AlignTo::pinned: out += "the pinned window"; break;
    case storage::AlignTo::smoothed:
      std::snprintf(text, sizeof text, "a smoothed reference, half-life %g windows", c.smoothing_half_life);
      out += text;
      break;
  }
  out += ", with at least " + std::to_string(c.effective_min_shared_assets()) + " shared assets\n";
  out += "  pinned window: " + (c.pinned_window.empty() ? std::string("the first window") : c.pinned_window) + "\n";
  char tolerance[96];
  std::snprintf(tolerance, sizeof tolerance, "  tolerance:     %g (%s)\n", c.tolerance,
                c.method == engine::Method::max_likelihood ? "largest scaled gradient of the log-likelihood"
                : c.method == engine::Method::principal_axis ? "largest change of a communality"
                                                             : "not used by pca");
  out += tolerance;
  out += "  drift alerts:  against the previous window " + threshold_text(c.alert_below) +
         "; against the pinned window " + threshold_text(c.alert_below_pinned) + "\n";
  return out;
}

std::string number_text(double x) {
  char text[32];
  std::snprintf(text, sizeof text, "%g", x);
  return text;
}

int run_model_set(const ModelArguments& a, storage::Database& db) {
  storage::ModelConfig config;
  if (auto current = storage::find_model(db, a.name)) config = current->config;
  try {
    if (a.universe_opt->count()) {
      if (a.universe == "all") config.universe.clear();
      else config.universe = storage::read_universe_file(a.universe);
    }
  } catch (const storage::InputError& e) {
    std::fprintf(stderr, "factorwatch model set: %s\n", e.what());
    return kExitBadInput;
  }
  if (a.window_opt->count()) config.window = a.window;
  if (a.step_opt->count()) config.step = a.step;
  if (a.method_opt->count()) config.method = *engine::parse_method(a.method);
  if (a.factors_opt->count()) config.factors = a.factors;
  if (a.basis_opt->count()) config.basis = *engine::parse_basis(a.basis);
  if (a.half_life_opt->count()) {
    config.weighting = engine::Weighting::ewma;
    config.half_life = a.half_life;
  }
  if (a.equal_weights) {
    config.weighting = engine::Weighting::equal;
    config.half_life = 0;
  }
  if (a.min_coverage_opt->count()) config.min_coverage = a.min_coverage;
  if (a.tolerance_opt->count()) config.tolerance = a.tolerance;
  if (a.first_as_of_opt->count()) config.first_as_of = a.first_as_of == "none" ? "" : a.first_as_of;
  if (a.rotation_opt->count()) config.rotation = *engine::parse_rotation(a.rotation);
  if (a.kaiser_opt->count()) config.kaiser_normalize = a.kaiser_normalize == "yes";
  if (a.align_to_opt->count()) config.align_to = *storage::parse_align_to(a.align_to);
  if (a.pinned_window_opt->count()) config.pinned_window = a.pinned_window == "first" ? "" : a.pinned_window;
  if (a.smoothing_opt->count()) config.smoothing_half_life = a.smoothing_half_life;
  if (a.min_shared_opt->count()) config.min_shared_assets = a.min_shared_assets;
  if (a.alert_below_opt->count()) config.alert_below = a.alert_below;
  if (a.alert_below_pinned_opt->count()) config.alert_below_pinned = a.alert_below_pinned;

  if (const auto f = config.FirstFailure()) {
    std::fprintf(stderr, "factorwatch model set: %s\nNothing was changed.\n", cli_text(*f).c_str());
    return exit_code(f->kind);
  }
  storage::SetModelOutcome outcome;
  try {
    outcome = storage::set_model(db, a.name, config);
  } catch (const std::invalid_argument& e) {
    std::fprintf(stderr, "factorwatch model set: %s\nNothing was changed.\n", e.what());
    return kExitBadInput;
  }
  const storage::ModelVersion& m = outcome.model;
  if (outcome.created) std::printf("model %s created (version 1)\n", m.name.c_str());
  else if (outcome.new_version) std::printf("model %s: new version %d (earlier windows keep their versions)\n", m.name.c_str(), m.version);
  else std::printf("model %s: configuration unchanged (version %d)\n", m.name.c_str(), m.version);
  std::printf("%s", describe(m.config).c_str());
  if (!m.config.universe.empty()) {
    std::size_t unknown = 0;
    for (const std::string& asset : m.config.universe) unknown += !storage::has_asset(db, asset);
    if (unknown > 0)
      std::printf("  note: %zu of the %zu universe assets have no stored returns yet\n", unknown, m.config.universe.size());
  }
  return kExitOk;
}

int run_model_show(const ModelArguments& a, storage::Database& db) {
  const auto m = storage::find_model(db, a.name);
  if (!m) {
    std::fprintf(stderr, "factorwatch model show: no model named '%s'\n", a.name.c_str());
    return kExitBadInput;
  }
  const storage::WindowCounts counts = storage::count_windows(db, m->id);
  if (a.format == "json") {
    std::cout << model_json(*m, counts).dump(2) << "\n";
    return kExitOk;
  }
  std::printf("model %s, version %d (since %s, configuration %s)\n%s", m->name.c_str(), m->version,
              m->created_at.c_str(), m->configuration_hash.c_str(), describe(m->config).c_str());
  std::printf("  windows:       %zu stored (%zu stale)%s%s\n", counts.windows, counts.stale,
              counts.windows == 0 ? "" : ", latest as of ", counts.latest_as_of.c_str());
  return kExitOk;
}

int run_model_list(storage::Database& db) {
  const auto models = storage::list_models(db);
  if (models.empty()) {
    std::printf("no models yet; define one with: factorwatch model set NAME --factors K --window DATES\n");
    return kExitOk;
  }
  std::printf("%-20s %7s %-14s %7s %6s %5s %8s  %s\n", "model", "version", "method", "factors", "window", "step",
              "windows", "latest as-of");
  for (const auto& m : models) {
    const storage::WindowCounts counts = storage::count_windows(db, m.id);
    std::printf("%-20s %7d %-14s %7d %6d %5d %8zu  %s\n", m.name.c_str(), m.version, engine::to_string(m.config.method),
                m.config.factors, m.config.window, m.config.step, counts.windows,
                counts.windows == 0 ? "-" : counts.latest_as_of.c_str());
  }
  return kExitOk;
}

}  // namespace

CLI::App* add_model_command(CLI::App& app, ModelArguments& a) {
  CLI::App* model = app.add_subcommand("model", "Define, show and list models");
  model->require_subcommand(1);
  a.set = model->add_subcommand("set", "Define a model, or change it (a change starts a new version)");
  a.set->add_option("NAME", a.name, "Model name: letters, digits, '.', '_', '-'")->required();
  a.universe_opt = a.set->add_option("--universe", a.universe,
                                     "File listing the assets to fit, one per line; 'all' for every stored asset (default)")
                       ->type_name("FILE|all");
  a.window_opt = a.set->add_option("--window", a.window, "Dates per window (default 504)")->type_name("DATES");
  a.step_opt = a.set->add_option("--step", a.step, "Fit a window every this many dates (default 1)")->type_name("DATES");
  a.method_opt = a.set->add_option("--method", a.method, "pca, principal-axis or ml (default ml)")
                     ->check(CLI::IsMember({"pca", "principal-axis", "ml"}));
  a.factors_opt = a.set->add_option("--factors", a.factors, "Number of factors (default 5)")->type_name("K");
  a.basis_opt = a.set->add_option("--basis", a.basis, "covariance or correlation (default covariance)")
                    ->check(CLI::IsMember({"covariance", "correlation"}));
  a.half_life_opt = a.set->add_option("--half-life", a.half_life, "Exponential weights with this half-life")
                        ->type_name("DATES");
  auto* equal = a.set->add_flag("--equal-weights", a.equal_weights, "Equal weights (the default)");
  equal->excludes(a.half_life_opt);
  a.min_coverage_opt = a.set->add_option("--min-coverage", a.min_coverage,
                                         "Share of a window's dates an asset needs (default 0.8)")
                           ->type_name("SHARE");
  a.first_as_of_opt = a.set->add_option("--first-as-of", a.first_as_of,
                                        "Fit no window ending before this date ('none': no limit)")
                          ->type_name("DATE");
  const storage::ModelConfig defaults;  // the help states the defaults the storage applies
  a.tolerance_opt = a.set->add_option("--tolerance", a.tolerance,
                                      "Where ml and principal-axis fits stop: ml, the largest scaled gradient of the "
                                      "log-likelihood; principal-axis, the largest change of a communality (default " +
                                          number_text(defaults.tolerance) + ")")
                        ->type_name("X");
  a.rotation_opt = a.set->add_option("--rotation", a.rotation,
                                     std::string("Rotation of every window's loadings: none, varimax or promax (default ") +
                                         engine::to_string(defaults.rotation) + ")")
                       ->check(CLI::IsMember({"none", "varimax", "promax"}));
  a.kaiser_opt = a.set->add_option("--kaiser-normalize", a.kaiser_normalize,
                                   std::string("Scale each asset's row to unit length while rotating (default ") +
                                       (defaults.kaiser_normalize ? "yes" : "no") + ")")
                     ->check(CLI::IsMember({"yes", "no"}));
  a.align_to_opt = a.set->add_option("--align-to", a.align_to,
                                     std::string("Align each window's factors onto the previous window, the pinned "
                                                 "window or a smoothed reference of past windows (default ") +
                                         storage::to_string(defaults.align_to) + ")")
                       ->check(CLI::IsMember({"previous", "pinned", "smoothed"}));
  a.pinned_window_opt = a.set->add_option("--pinned-window", a.pinned_window,
                                          "As-of date of the window drift is also measured against (and aligned onto "
                                          "with --align-to pinned); 'first': the model's first window (default)")
                            ->type_name("DATE|first");
  a.smoothing_opt = a.set->add_option("--smoothing-half-life", a.smoothing_half_life,
                                      "Half-life of the smoothed reference, in windows (default " +
                                          number_text(defaults.smoothing_half_life) + ")")
                        ->type_name("N");
  a.min_shared_opt = a.set->add_option("--min-shared-assets", a.min_shared_assets,
                                       "Fewer assets shared with the reference and a window is left as fitted "
                                       "(default " + std::to_string(defaults.min_shared_assets) + ")")
                         ->type_name("N");
  a.alert_below_opt = a.set->add_option("--alert-below", a.alert_below,
                                        "Alert when a factor's congruence with the previous window is below this "
                                        "(default " + number_text(defaults.alert_below) + "; 0: no alerts)")
                          ->type_name("X");
  a.alert_below_pinned_opt = a.set->add_option("--alert-below-pinned", a.alert_below_pinned,
                                               "Alert when a factor's congruence with the pinned window falls below "
                                               "this (default " + number_text(defaults.alert_below_pinned) +
                                                   "; 0: no alerts)")
                                 ->type_name("X");
  a.show = model->add_subcommand("show", "Show a model's configuration and stored windows");
  a.show->add_option("NAME", a.name, "Model name")->required();
  a.show->add_option("--format", a.format, "table or json")->check(CLI::IsMember({"table", "json"}))->capture_default_str();
  a.list = model->add_subcommand("list", "List the models");
  return model;
}

int run_model_command(const ModelArguments& a, const GlobalArguments& global) {
  auto db = open_database(global, "model");
  if (!db) return kExitFailed;
  try {
    if (a.set->parsed()) return run_model_set(a, *db);
    if (a.show->parsed()) return run_model_show(a, *db);
    return run_model_list(*db);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch model: %s\n", e.what());
    return kExitFailed;
  }
}

}  // namespace factorwatch::server
