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
#include "factorwatch/storage/model_fields.h"
#include "factorwatch/storage/timestamps.h"
#include "fingerprint.h"

namespace factorwatch::storage {
namespace {

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

engine::RotationOptions model_rotation() {
  engine::RotationOptions o;
  o.method = engine::RotationMethod::none;
  o.kaiser_normalize = true;
  o.tolerance = kRotationTolerance;
  return o;
}

std::optional<engine::Failure> ModelConfig::FirstFailure() const {
  for (const ModelField& field : model_fields())
    if (auto f = field.check(*this)) return f;
  // What is left of the engine's rules cannot fail for a configuration that passed the
  // checks above (the options a model does not set keep valid defaults); a guard.
  if (auto f = fit_options().FirstFailure()) return f;
  std::string error;
  if (!rotation.IsValid(&error)) return engine::bad_number("rotation", "", error);
  return std::nullopt;
}

engine::FitOptions ModelConfig::fit_options() const {
  engine::FitOptions o = fit;
  if (o.weighting != engine::Weighting::ewma) o.half_life = 0;
  return o;
}

nlohmann::ordered_json ModelConfig::to_json() const {
  nlohmann::ordered_json j;
  for (const ModelField& field : model_fields()) j[field.member] = field.get(*this);
  return j;
}

ModelConfig ModelConfig::from_json(const nlohmann::json& j) {
  ModelConfig c;
  auto unreadable = [](const std::string& why) {
    return std::runtime_error("stored model configuration is not readable: " + why);
  };
  if (!j.is_object()) throw unreadable("not a JSON object");
  for (const ModelField& field : model_fields()) {
    const auto value = j.find(field.member);
    if (value == j.end()) {
      // Members from schema 5 on are absent in configurations stored before, which had
      // the defaults.
      if (field.added_after_schema_4) continue;
      throw unreadable("member '" + std::string(field.member) + "' is missing");
    }
    if (auto why = field.set(c, *value)) throw unreadable("member '" + std::string(field.member) + "': " + *why);
  }
  // The stored weighting is what was fitted, whatever the half-life (setting the half-life
  // above chose the weighting from it).
  if (auto why = find_model_field("weighting")->set(c, j.at("weighting")))
    throw unreadable("member 'weighting': " + *why);
  return c;
}

std::string ModelConfig::hash() const {
  nlohmann::ordered_json j = to_json();
  const nlohmann::ordered_json d = ModelConfig{}.to_json();
  for (const ModelField& field : model_fields())
    if (field.added_after_schema_4 && j[field.member] == d[field.member]) j.erase(field.member);
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
