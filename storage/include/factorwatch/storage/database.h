// The factorwatch database: one SQLite file holding returns, ingest runs, models and
// fitted windows (schema in docs/storage.md).
//
// Opening it sets WAL mode (readers never wait for a writer), foreign keys and a busy
// timeout, and runs every pending forward migration in one transaction, so a program
// always sees the schema it was built for. Only storage/ includes SQLiteCpp; callers
// hold a Database and use the storage functions that take one.
#pragma once

#include <memory>
#include <string>

namespace SQLite {
class Database;
}

namespace factorwatch::storage {
namespace detail {
class AssetDirectory;
}

class Database {
 public:
  // Opens the file (creating it when absent) and migrates it to the current schema.
  // Throws std::runtime_error naming the file when it cannot be opened, is not a
  // factorwatch database, or was written by a newer factorwatch.
  explicit Database(const std::string& path);
  ~Database();
  Database(const Database&) = delete;
  Database& operator=(const Database&) = delete;

  const std::string& path() const { return path_; }
  int schema_version() const;

  // For storage's own sources.
  SQLite::Database& sql() { return *db_; }
  detail::AssetDirectory& assets();  // asset ids <-> names, cached

 private:
  std::string path_;
  std::unique_ptr<SQLite::Database> db_;
  std::unique_ptr<detail::AssetDirectory> assets_;
};

// The schema version this build writes (the number of migrations it knows).
int current_schema_version();

}  // namespace factorwatch::storage
