#include "factorwatch/storage/assets.h"

#include <SQLiteCpp/SQLiteCpp.h>

#include "asset_directory.h"
#include "factorwatch/storage/date_key.h"

namespace factorwatch::storage {

std::vector<AssetInfo> list_assets(Database& db) {
  SQLite::Statement q(db.sql(), "SELECT name, first_date, last_date FROM assets ORDER BY name");
  std::vector<AssetInfo> out;
  while (q.executeStep()) {
    AssetInfo a;
    a.name = q.getColumn(0).getString();
    if (!q.getColumn(1).isNull()) a.first_date = stored_date(q.getColumn(1).getInt());
    if (!q.getColumn(2).isNull()) a.last_date = stored_date(q.getColumn(2).getInt());
    out.push_back(std::move(a));
  }
  return out;
}

bool has_asset(Database& db, const std::string& name) { return db.assets().id(name) >= 0; }

}  // namespace factorwatch::storage
