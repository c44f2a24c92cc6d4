#include "damage_context.h"

#include <SQLiteCpp/SQLiteCpp.h>

#include "factorwatch/storage/date_key.h"

namespace factorwatch::storage::detail {

std::string window_place(Database& db, long long model_version_id, std::int32_t as_of, const char* table) {
  std::string model = "model version id " + std::to_string(model_version_id);
  try {
    SQLite::Statement q(db.sql(),
                        "SELECT m.name, v.version FROM model_versions v JOIN models m ON m.id = v.model_id "
                        "WHERE v.id = ?");
    q.bind(1, static_cast<std::int64_t>(model_version_id));
    if (q.executeStep())
      model = "model '" + q.getColumn(0).getString() + "' (version " + std::to_string(q.getColumn(1).getInt()) + ")";
  } catch (const std::exception&) {
    // The numeric id is still a place to start from.
  }
  return model + ", window " + key_text(as_of) + (table ? std::string(", table ") + table : std::string());
}

void rethrow_for_window(Database& db, long long model_version_id, std::int32_t as_of, const char* table,
                        const std::exception& e) {
  throw DamagedData("stored data damaged: " + window_place(db, model_version_id, as_of, table) + ": " + e.what() +
                    "; restore the database from a backup (factorwatch verify lists every damaged row)");
}

}  // namespace factorwatch::storage::detail
