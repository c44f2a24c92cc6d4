#include "model_command.h"

#include <algorithm>
#include <cstdio>
#include <iostream>
#include <stdexcept>

#include "factorwatch/pipeline/model_checks.h"
#include "factorwatch/storage/assets.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/model_fields.h"
#include "factorwatch/storage/model_lifecycle.h"
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
                universe.c_str(), c.window, c.step, c.step == 1 ? "" : "s", engine::to_string(c.fit.method), c.fit.factors,
                engine::to_string(c.fit.basis),
                c.fit.weighting == engine::Weighting::ewma ? ("exponential, half-life " + std::to_string(c.fit.half_life) + " dates").c_str()
                                                       : "equal",
                c.fit.min_coverage, c.first_as_of ? c.first_as_of->iso().c_str() : "as early as the data allow");
  std::string out = text;
  out += "  rotation:      " + std::string(engine::to_string(c.rotation.method));
  if (c.rotation.method != engine::RotationMethod::none)
    out += c.rotation.kaiser_normalize ? " (rows Kaiser-normalised)" : " (without Kaiser normalisation)";
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
  out += "  pinned window: " + (c.pinned_window ? c.pinned_window->iso() : std::string("the first window")) + "\n";
  char tolerance[96];
  std::snprintf(tolerance, sizeof tolerance, "  tolerance:     %g (%s)\n", c.fit.tolerance,
                c.fit.method == engine::Method::max_likelihood ? "largest scaled gradient of the log-likelihood"
                : c.fit.method == engine::Method::principal_axis ? "largest change of a communality"
                                                             : "not used by pca");
  out += tolerance;
  out += "  drift alerts:  against the previous window " + threshold_text(c.alert_below) +
         "; against the pinned window " + threshold_text(c.alert_below_pinned) + "\n";
  return out;
}

// The option's value as the JSON value the field table reads: a universe list file read
// into its names, the default's keyword as null, yes/no as true/false.
nlohmann::json option_json(const storage::ModelField& field, const ModelOptionValue& v) {
  switch (field.kind) {
    case storage::FieldKind::universe:
      return v.text == "all" ? nlohmann::json("all") : nlohmann::json(storage::read_universe_file(v.text));
    case storage::FieldKind::whole_number: return v.whole;
    case storage::FieldKind::number:
    case storage::FieldKind::half_life: return v.number;
    case storage::FieldKind::date_or_default: return v.text == field.keyword ? nlohmann::json() : nlohmann::json(v.text);
    case storage::FieldKind::yes_no: return v.text == "yes";
    case storage::FieldKind::choice:
    case storage::FieldKind::follows: break;
  }
  return v.text;
}

int run_model_set(const ModelArguments& a, storage::Database& db) {
  storage::ModelConfig config;
  if (auto current = storage::find_model(db, a.name)) config = current->config;
  for (const storage::ModelField& field : storage::model_fields()) {
    const auto given = a.options.find(field.member);
    if (given == a.options.end() || given->second.option->count() == 0) continue;
    std::optional<engine::Failure> refused;
    try {
      refused = storage::set_model_field(field, config, option_json(field, given->second));
    } catch (const storage::InputError& e) {  // the universe file
      std::fprintf(stderr, "factorwatch model set: %s\n", e.what());
      return kExitBadInput;
    }
    // CLI11 has checked the types and the choices; a date is read here.
    if (refused) {
      std::fprintf(stderr, "factorwatch model set: %s\nNothing was changed.\n", cli_text(*refused).c_str());
      return exit_code(refused->kind);
    }
  }
  if (a.equal_weights) storage::find_model_field("half_life")->set(config, nullptr);

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
  if (const auto warning = pipeline::factors_warning(db, m.config)) std::printf("  warning: %s\n", warning->c_str());
  return kExitOk;
}

int run_model_show(const ModelArguments& a, storage::Database& db) {
  const auto m = storage::find_model(db, a.name);
  if (!m) {
    std::fprintf(stderr, "factorwatch model show: no model named '%s'\n", a.name.c_str());
    return kExitBadInput;
  }
  const storage::WindowCounts counts = storage::count_windows(db, m->id);
  const pipeline::ModelStanding standing = pipeline::model_standing(db, *m);
  if (a.format == "json") {
    std::cout << model_json(*m, counts, standing).dump(2) << "\n";
    return kExitOk;
  }
  std::printf("model %s, version %d (since %s, configuration %s)\n%s", m->name.c_str(), m->version,
              m->created_at.c_str(), m->configuration_hash.c_str(), describe(m->config).c_str());
  std::printf("  windows:       %zu stored (%zu stale)%s%s\n", counts.windows, counts.stale,
              counts.windows == 0 ? "" : ", latest as of ", engine::iso_or_empty(counts.latest_as_of).c_str());
  std::printf("  data:          %s\n", standing_text(m->name, standing).c_str());
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
    std::printf("%-20s %7d %-14s %7d %6d %5d %8zu  %s\n", m.name.c_str(), m.version, engine::to_string(m.config.fit.method),
                m.config.fit.factors, m.config.window, m.config.step, counts.windows,
                counts.windows == 0 ? "-" : engine::iso_or_empty(counts.latest_as_of).c_str());
  }
  return kExitOk;
}

int no_such_model(const char* command, const std::string& name) {
  std::fprintf(stderr, "factorwatch model %s: no model named '%s' (factorwatch model list shows them)\n", command,
               name.c_str());
  return kExitBadInput;
}

int run_model_delete(const ModelArguments& a, storage::Database& db) {
  const auto removed = storage::delete_model(db, a.name);
  if (!removed) return no_such_model("delete", a.name);
  std::printf("model %s deleted: %zu version%s and %zu window%s, with their alignments, drift and alerts; the stored "
              "returns and portfolios are kept\n",
              a.name.c_str(), removed->versions, removed->versions == 1 ? "" : "s", removed->windows,
              removed->windows == 1 ? "" : "s");
  return kExitOk;
}

int run_model_prune(const ModelArguments& a, storage::Database& db) {
  const auto removed = storage::prune_model(db, a.name);
  if (!removed) return no_such_model("prune", a.name);
  const auto m = storage::find_model(db, a.name);
  const storage::WindowCounts counts = storage::count_windows(db, m->id);
  std::printf("model %s: %zu superseded version%s pruned with %zu window%s; version %d and its %zu window%s kept\n",
              a.name.c_str(), removed->versions, removed->versions == 1 ? "" : "s", removed->windows,
              removed->windows == 1 ? "" : "s", m->version, counts.windows, counts.windows == 1 ? "" : "s");
  return kExitOk;
}

int run_model_rename(const ModelArguments& a, storage::Database& db) {
  try {
    if (!storage::rename_model(db, a.name, a.new_name)) return no_such_model("rename", a.name);
  } catch (const std::invalid_argument& e) {
    std::fprintf(stderr, "factorwatch model rename: %s\nNothing was changed.\n", e.what());
    return kExitBadInput;
  }
  std::printf("model %s renamed to %s (every version and window goes with it)\n", a.name.c_str(), a.new_name.c_str());
  return kExitOk;
}

}  // namespace

CLI::App* add_model_command(CLI::App& app, ModelArguments& a) {
  CLI::App* model = app.add_subcommand("model", "Define, show and list models");
  model->require_subcommand(1);
  a.set = model->add_subcommand("set", "Define a model, or change it (a change starts a new version)");
  a.set->add_option("NAME", a.name, "Model name: letters, digits, '.', '_', '-'")->required();
  // One option per member of the field table, typed by its kind so that CLI11 converts
  // and checks the value; the flag is the member with dashes.
  for (const storage::ModelField& field : storage::model_fields()) {
    if (field.kind == storage::FieldKind::follows) continue;
    const std::string flag = cli_flag(field.member);
    ModelOptionValue& value = a.options[field.member];
    const std::string help = storage::help_text(field);
    switch (field.kind) {
      case storage::FieldKind::whole_number: value.option = a.set->add_option(flag, value.whole, help); break;
      case storage::FieldKind::number:
      case storage::FieldKind::half_life: value.option = a.set->add_option(flag, value.number, help); break;
      default: value.option = a.set->add_option(flag, value.text, help); break;
    }
    if (!field.choices.empty()) value.option->check(CLI::IsMember(field.choices));
    else value.option->type_name(field.value_name);
    if (field.kind == storage::FieldKind::half_life)
      a.set->add_flag("--equal-weights", a.equal_weights, "Equal weights (the default)")->excludes(value.option);
  }
  a.show = model->add_subcommand("show", "Show a model's configuration and stored windows");
  a.show->add_option("NAME", a.name, "Model name")->required();
  a.show->add_option("--format", a.format, "table or json")->check(CLI::IsMember({"table", "json"}))->capture_default_str();
  a.list = model->add_subcommand("list", "List the models");
  a.remove = model->add_subcommand("delete", "Delete a model: every version, window, alignment, drift row and alert");
  a.remove->add_option("NAME", a.name, "Model name")->required();
  a.prune = model->add_subcommand("prune", "Delete the versions a change superseded, with their windows");
  a.prune->add_option("NAME", a.name, "Model name")->required();
  a.rename = model->add_subcommand("rename", "Give a model a new name");
  a.rename->add_option("NAME", a.name, "Model name")->required();
  a.rename->add_option("NEW_NAME", a.new_name, "New name: letters, digits, '.', '_', '-'")->required();
  return model;
}

int run_model_command(const ModelArguments& a, const GlobalArguments& global) {
  auto db = open_database(global, "model");
  if (!db) return kExitFailed;
  try {
    if (a.set->parsed()) return run_model_set(a, *db);
    if (a.show->parsed()) return run_model_show(a, *db);
    if (a.remove->parsed()) return run_model_delete(a, *db);
    if (a.prune->parsed()) return run_model_prune(a, *db);
    if (a.rename->parsed()) return run_model_rename(a, *db);
    return run_model_list(*db);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch model: %s\n", e.what());
    return kExitFailed;
  }
}

}  // namespace factorwatch::server
