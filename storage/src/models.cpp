#include "factorwatch/storage/models.h"

#include <SQLiteCpp/SQLiteCpp.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <fstream>
#include <set>
#include <stdexcept>

#include "cell_parse.h"
#include "factorwatch/storage/date_key.h"
#include "factorwatch/storage/identifier_rule.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/timestamps.h"
#include "fingerprint.h"

namespace factorwatch::storage {
namespace {

const char* weighting_name(engine::Weighting w) { return w == engine::Weighting::ewma ? "ewma" : "equal"; }


ModelVersion read_version(SQLite::Statement& q) {
  ModelVersion m;
  m.id = static_cast<long>(q.getColumn(0).getInt64());
  m.name = q.getColumn(1).getString();
  m.version = q.getColumn(2).getInt();
  m.config = ModelConfig::from_json(nlohmann::json::parse(q.getColumn(3).getString()));
  m.configuration_hash = q.getColumn(4).getString();
  m.created_at = q.getColumn(5).getString();
  return m;
}

constexpr const char* kSelectVersion =
    "SELECT v.id, m.name, v.version, v.configuration, v.configuration_hash, v.created_at "
    "FROM model_versions v JOIN models m ON m.id = v.model_id ";

}  // namespace

const char* to_string(AlignTo a) {
  switch (a) {
    case AlignTo::previous: return "previous";
    case AlignTo::pinned: return "pinned";
    case AlignTo::smoothed: return "smoothed";
  }
  return "previous";
}

std::optional<AlignTo> parse_align_to(const std::string& s) {
  for (AlignTo a : {AlignTo::previous, AlignTo::pinned, AlignTo::smoothed})
    if (s == to_string(a)) return a;
  return std::nullopt;
}

std::optional<engine::Failure> ModelConfig::FirstFailure() const {
  using engine::bad_number;
  auto bad_date = [](const char* field, const std::string& value) {
    return engine::failure(engine::FailureKind::bad_input, field, value, "not a date in the form yyyy-mm-dd");
  };
  if (window < 2) return bad_number("window", std::to_string(window), "must be at least 2 dates");
  if (step < 1) return bad_number("step", std::to_string(step), "must be at least 1 date");
  if (factors < 1) return bad_number("factors", std::to_string(factors), "must be at least 1");
  if (factors >= window)
    return bad_number("factors", std::to_string(factors),
                      "must be below the window length (" + std::to_string(window) + " dates)");
  if (weighting == engine::Weighting::ewma && !(half_life > 0 && std::isfinite(half_life)))
    return bad_number("half_life", "", "exponential weighting needs a half-life above 0 dates");
  if (!(tolerance > 0 && tolerance <= 0.01))
    return bad_number("tolerance", detail::shortest(tolerance), "must be in (0, 0.01]");
  if (!(min_coverage > 0 && min_coverage <= 1))
    return bad_number("min_coverage", std::to_string(min_coverage), "must be in (0, 1]");
  if (!first_as_of.empty() && !detail::parse_iso_date(first_as_of)) return bad_date("first_as_of", first_as_of);
  if (!pinned_window.empty() && !detail::parse_iso_date(pinned_window)) return bad_date("pinned_window", pinned_window);
  if (!(smoothing_half_life > 0 && std::isfinite(smoothing_half_life)))
    return bad_number("smoothing_half_life", std::to_string(smoothing_half_life), "must be above 0 windows");
  if (min_shared_assets < 1)
    return bad_number("min_shared_assets", std::to_string(min_shared_assets), "must be at least 1");
  if (!(alert_below >= 0 && alert_below <= 1))
    return bad_number("alert_below", std::to_string(alert_below), "must be in [0, 1] (0: no alert)");
  if (!(alert_below_pinned >= 0 && alert_below_pinned <= 1))
    return bad_number("alert_below_pinned", std::to_string(alert_below_pinned), "must be in [0, 1] (0: no alert)");
  std::set<std::string> seen;
  for (const std::string& a : universe) {
    if (auto problem = identifier_problem(a)) return bad_number("universe", "", "the asset name " + *problem);
    if (!seen.insert(a).second)
      return bad_number("universe", "", "asset " + detail::quoted(a) + " is listed twice");
  }
  // What is left of the engine's rules cannot fail for a configuration that passed the
  // checks above (the fixed options are valid); they stay as a guard.
  if (auto f = fit_options().FirstFailure()) return f;
  std::string error;
  if (!rotation_options().IsValid(&error)) return bad_number("rotation", "", error);
  return std::nullopt;
}

engine::RotationOptions ModelConfig::rotation_options() const {
  engine::RotationOptions o;
  o.method = rotation;
  o.kaiser_normalize = kaiser_normalize;
  // Tighter than R's default 1e-5: the rotation of a window should not depend on where
  // the criterion's slow tail happened to stop (the alignment would see that as drift).
  o.tolerance = 1e-10;
  return o;
}

engine::FitOptions ModelConfig::fit_options() const {
  engine::FitOptions o;
  o.method = method;
  o.factors = factors;
  o.basis = basis;
  o.weighting = weighting;
  o.half_life = weighting == engine::Weighting::ewma ? half_life : 0;
  o.min_coverage = min_coverage;
  o.tolerance = tolerance;
  return o;
}

nlohmann::ordered_json ModelConfig::to_json() const {
  nlohmann::ordered_json j;
  j["universe"] = universe;  // [] = all assets
  j["window"] = window;
  j["step"] = step;
  j["method"] = engine::to_string(method);
  j["factors"] = factors;
  j["basis"] = engine::to_string(basis);
  j["weighting"] = weighting_name(weighting);
  j["half_life"] = half_life;
  j["min_coverage"] = min_coverage;
  j["first_as_of"] = first_as_of;
  j["tolerance"] = tolerance;
  j["rotation"] = engine::to_string(rotation);
  j["kaiser_normalize"] = kaiser_normalize;
  j["align_to"] = to_string(align_to);
  j["pinned_window"] = pinned_window;
  j["smoothing_half_life"] = smoothing_half_life;
  j["min_shared_assets"] = min_shared_assets;
  j["alert_below"] = alert_below;
  j["alert_below_pinned"] = alert_below_pinned;
  return j;
}

ModelConfig ModelConfig::from_json(const nlohmann::json& j) {
  ModelConfig c;
  try {
    c.universe = j.at("universe").get<std::vector<std::string>>();
    c.window = j.at("window").get<int>();
    c.step = j.at("step").get<int>();
    const auto method = engine::parse_method(j.at("method").get<std::string>());
    const auto basis = engine::parse_basis(j.at("basis").get<std::string>());
    if (!method || !basis) throw std::runtime_error("unknown method or basis");
    c.method = *method;
    c.basis = *basis;
    c.factors = j.at("factors").get<int>();
    c.weighting = j.at("weighting").get<std::string>() == "ewma" ? engine::Weighting::ewma : engine::Weighting::equal;
    c.half_life = j.at("half_life").get<double>();
    c.min_coverage = j.at("min_coverage").get<double>();
    c.first_as_of = j.at("first_as_of").get<std::string>();
    // Members from schema 5 on: absent in configurations stored before, which had these defaults.
    if (j.contains("rotation")) {
      const auto rotation = engine::parse_rotation(j.at("rotation").get<std::string>());
      if (!rotation) throw std::runtime_error("unknown rotation");
      c.rotation = *rotation;
    }
    if (j.contains("kaiser_normalize")) c.kaiser_normalize = j.at("kaiser_normalize").get<bool>();
    if (j.contains("align_to")) {
      const auto align_to = parse_align_to(j.at("align_to").get<std::string>());
      if (!align_to) throw std::runtime_error("unknown alignment reference");
      c.align_to = *align_to;
    }
    if (j.contains("pinned_window")) c.pinned_window = j.at("pinned_window").get<std::string>();
    if (j.contains("smoothing_half_life")) c.smoothing_half_life = j.at("smoothing_half_life").get<double>();
    if (j.contains("min_shared_assets")) c.min_shared_assets = j.at("min_shared_assets").get<int>();
    if (j.contains("alert_below")) c.alert_below = j.at("alert_below").get<double>();
    if (j.contains("alert_below_pinned")) c.alert_below_pinned = j.at("alert_below_pinned").get<double>();
    if (j.contains("tolerance")) c.tolerance = j.at("tolerance").get<double>();
  } catch (const nlohmann::json::exception& e) {
    throw std::runtime_error(std::string("stored model configuration is not readable: ") + e.what());
  }
  return c;
}

std::string ModelConfig::hash() const {
  nlohmann::ordered_json j = to_json();
  const ModelConfig defaults;
  const nlohmann::ordered_json d = defaults.to_json();
  for (const char* member : {"rotation", "kaiser_normalize", "align_to", "pinned_window", "smoothing_half_life",
                             "min_shared_assets", "alert_below", "alert_below_pinned", "tolerance"})
    if (j[member] == d[member]) j.erase(member);
  detail::Fingerprint f;
  f.add(j.dump());
  return f.hex();
}

bool valid_model_name(const std::string& name, std::string* error) {
  const bool ok = !name.empty() && name.size() <= 64 && std::all_of(name.begin(), name.end(), [](char c) {
    return std::isalnum(static_cast<unsigned char>(c)) || c == '.' || c == '_' || c == '-';
  });
  if (!ok) *error = "model name '" + name + "': use 1 to 64 letters, digits, '.', '_' or '-'";
  return ok;
}

SetModelOutcome set_model(Database& db, const std::string& name, const ModelConfig& config) {
  std::string error;
  if (!valid_model_name(name, &error)) throw std::invalid_argument(error);
  // The surfaces check first and name the field their own way; this is the guard.
  if (const auto f = config.FirstFailure()) throw std::invalid_argument(engine::describe(*f, "member '" + f->field + "'"));
  SQLite::Database& sql = db.sql();
  SQLite::Transaction transaction(sql, SQLite::TransactionBehavior::IMMEDIATE);
  SetModelOutcome outcome;
  const std::optional<ModelVersion> current = find_model(db, name);
  const std::string hash = config.hash();
  if (current && current->configuration_hash == hash) {
    outcome.model = *current;
    return outcome;  // nothing to write; the transaction rolls back an empty change
  }
  long model_id = 0;
  if (current) {
    SQLite::Statement q(sql, "SELECT id FROM models WHERE name = ?");
    q.bind(1, name);
    q.executeStep();
    model_id = static_cast<long>(q.getColumn(0).getInt64());
  } else {
    SQLite::Statement insert(sql, "INSERT INTO models (name, created_at) VALUES (?, ?)");
    insert.bind(1, name);
    insert.bind(2, utc_timestamp());
    insert.exec();
    model_id = static_cast<long>(sql.getLastInsertRowid());
    outcome.created = true;
  }
  SQLite::Statement insert(sql,
                           "INSERT INTO model_versions (model_id, version, configuration, configuration_hash, "
                           "created_at) VALUES (?, ?, ?, ?, ?)");
  insert.bind(1, static_cast<std::int64_t>(model_id));
  insert.bind(2, current ? current->version + 1 : 1);
  insert.bind(3, config.to_json().dump());
  insert.bind(4, hash);
  insert.bind(5, utc_timestamp());
  insert.exec();
  transaction.commit();
  outcome.new_version = true;
  outcome.model = *find_model(db, name);
  return outcome;
}

std::optional<ModelVersion> find_model(Database& db, const std::string& name) {
  SQLite::Statement q(db.sql(), std::string(kSelectVersion) + "WHERE m.name = ? ORDER BY v.version DESC LIMIT 1");
  q.bind(1, name);
  if (!q.executeStep()) return std::nullopt;
  return read_version(q);
}

std::vector<ModelVersion> list_models(Database& db) {
  SQLite::Statement q(db.sql(), std::string(kSelectVersion) +
                                    "WHERE v.version = (SELECT max(version) FROM model_versions "
                                    "WHERE model_id = m.id) ORDER BY m.name");
  std::vector<ModelVersion> out;
  while (q.executeStep()) out.push_back(read_version(q));
  return out;
}

std::vector<std::string> read_universe_file(const std::string& path) {
  std::ifstream in(path);
  if (!in) throw InputError(path, 0, "", "cannot open the universe file");
  std::vector<std::string> assets;
  std::set<std::string> seen;
  std::string line;
  std::size_t number = 0;
  while (std::getline(in, line)) {
    ++number;
    if (!line.empty() && line.back() == '\r') line.pop_back();
    const auto begin = line.find_first_not_of(" \t");
    if (begin == std::string::npos || line[begin] == '#') continue;
    const auto end = line.find_last_not_of(" \t");
    std::string name = line.substr(begin, end - begin + 1);
    if (assets.empty() && seen.empty() && detail::same_name(name, "asset")) {
      seen.insert("");  // header consumed
      continue;
    }
    if (name.find(',') != std::string::npos)
      throw InputError(path, number, "asset", "one asset per line, without commas");
    check_identifier(name, path, number, "asset");
    if (!seen.insert(name).second) throw InputError(path, number, "asset", "asset " + detail::quoted(name) + " is listed twice");
    assets.push_back(std::move(name));
  }
  if (assets.empty()) throw InputError(path, number, "", "the universe file lists no assets");
  return assets;
}

}  // namespace factorwatch::storage
