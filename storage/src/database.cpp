#include "factorwatch/storage/database.h"

#include <SQLiteCpp/SQLiteCpp.h>

#include <stdexcept>

#include "asset_directory.h"
#include "migrations.h"

namespace factorwatch::storage {

int current_schema_version() { return detail::migrations().back().version; }

Database::Database(const std::string& path) : path_(path) {
  try {
    // A busy timeout rather than failing at once: a refresh and a load may overlap, and
    // each holds the write lock only for one window or one file.
    db_ = std::make_unique<SQLite::Database>(path, SQLite::OPEN_READWRITE | SQLite::OPEN_CREATE, 30000);
    db_->exec("PRAGMA journal_mode = WAL");
    // With WAL, NORMAL loses no committed transaction on a process crash (kill -9); only
    // a power cut may drop the last commits, never corrupt the file (SQLite docs, WAL).
    db_->exec("PRAGMA synchronous = NORMAL");
    db_->exec("PRAGMA foreign_keys = ON");
    // Keep the -wal file from staying at the size of the largest ingest.
    db_->exec("PRAGMA journal_size_limit = 67108864");
    detail::migrate_to(*db_, current_schema_version());
  } catch (const SQLite::Exception& e) {
    throw std::runtime_error("cannot open the database " + path + ": " + e.what());
  }
}

Database::~Database() = default;

detail::AssetDirectory& Database::assets() {
  if (!assets_) assets_ = std::make_unique<detail::AssetDirectory>(*db_);
  return *assets_;
}

int Database::schema_version() const { return detail::user_version(*db_); }

}  // namespace factorwatch::storage
