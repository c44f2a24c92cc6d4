#include "factorwatch/storage/model_lifecycle.h"

#include <SQLiteCpp/SQLiteCpp.h>

#include <stdexcept>

#include "factorwatch/storage/models.h"

namespace factorwatch::storage {
namespace {

std::optional<std::int64_t> model_id(SQLite::Database& sql, const std::string& name) {
  SQLite::Statement q(sql, "SELECT id FROM models WHERE name = ?");
  q.bind(1, name);
  if (!q.executeStep()) return std::nullopt;
  return q.getColumn(0).getInt64();
}

// Deletes the model versions `versions` selects (SQL over ?1, the model's id) with their
// windows and everything that refers to the windows, children first (foreign keys).
RemovedModelData delete_versions(SQLite::Database& sql, std::int64_t model, const std::string& versions) {
  const std::string windows = "SELECT id FROM windows WHERE model_version_id IN (" + versions + ")";
  RemovedModelData removed;
  for (const char* table : {"drift_alerts", "window_drift", "window_alignments"}) {
    SQLite::Statement q(sql, std::string("DELETE FROM ") + table + " WHERE window_id IN (" + windows + ")");
    q.bind(1, model);
    q.exec();
  }
  SQLite::Statement w(sql, "DELETE FROM windows WHERE model_version_id IN (" + versions + ")");
  w.bind(1, model);
  removed.windows = static_cast<std::size_t>(w.exec());
  SQLite::Statement v(sql, "DELETE FROM model_versions WHERE id IN (" + versions + ")");
  v.bind(1, model);
  removed.versions = static_cast<std::size_t>(v.exec());
  return removed;
}

}  // namespace

std::optional<RemovedModelData> delete_model(Database& db, const std::string& name) {
  SQLite::Database& sql = db.sql();
  SQLite::Transaction transaction(sql, SQLite::TransactionBehavior::IMMEDIATE);
  const auto model = model_id(sql, name);
  if (!model) return std::nullopt;
  const RemovedModelData removed = delete_versions(sql, *model, "SELECT id FROM model_versions WHERE model_id = ?1");
  SQLite::Statement m(sql, "DELETE FROM models WHERE id = ?");
  m.bind(1, *model);
  m.exec();
  transaction.commit();
  return removed;
}

std::optional<RemovedModelData> prune_model(Database& db, const std::string& name) {
  SQLite::Database& sql = db.sql();
  SQLite::Transaction transaction(sql, SQLite::TransactionBehavior::IMMEDIATE);
  const auto model = model_id(sql, name);
  if (!model) return std::nullopt;
  const RemovedModelData removed = delete_versions(
      sql, *model,
      "SELECT id FROM model_versions WHERE model_id = ?1 AND version < "
      "(SELECT max(version) FROM model_versions WHERE model_id = ?1)");
  transaction.commit();
  return removed;
}

bool rename_model(Database& db, const std::string& from, const std::string& to) {
  std::string error;
  if (!valid_model_name(to, &error)) throw std::invalid_argument(error);
  SQLite::Database& sql = db.sql();
  SQLite::Transaction transaction(sql, SQLite::TransactionBehavior::IMMEDIATE);
  const auto model = model_id(sql, from);
  if (!model) return false;
  if (from == to) return true;
  if (model_id(sql, to)) throw std::invalid_argument("model name '" + to + "' is taken: a model of that name exists");
  SQLite::Statement q(sql, "UPDATE models SET name = ? WHERE id = ?");
  q.bind(1, to);
  q.bind(2, *model);
  q.exec();
  transaction.commit();
  return true;
}

}  // namespace factorwatch::storage
