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
class Transaction;
}

namespace factorwatch::storage {
namespace detail {
class AssetDirectory;
}

class Database {
 public:
  // Opens the file (creating it, owner-only, when absent) and migrates it to the current
  // schema. Throws std::runtime_error naming the file when it cannot be opened, is empty
  // (0 bytes: a truncated database, never taken as a new one), is not a factorwatch
  // database, or was written by a newer factorwatch. Where the file or its directory is
  // not writable, opens it read-only (immutable when the -shm file cannot be made and no
  // -wal holds commits); it must then be at the current schema already.
  explicit Database(const std::string& path);
  ~Database();
  Database(const Database&) = delete;
  Database& operator=(const Database&) = delete;

  const std::string& path() const { return path_; }
  bool read_only() const { return read_only_; }
  bool immutable() const { return immutable_; }  // read-only without the -shm file
  int schema_version() const;

  // For storage's own sources.
  SQLite::Database& sql() { return *db_; }
  detail::AssetDirectory& assets();  // asset ids <-> names, cached

 private:
  void open_read_only();

  std::string path_;
  bool read_only_ = false, immutable_ = false;
  std::unique_ptr<SQLite::Database> db_;
  std::unique_ptr<detail::AssetDirectory> assets_;
};

// Several writes in one transaction, taken with the write lock at once (BEGIN IMMEDIATE),
// for a caller outside storage that writes many small rows through storage's functions
// (the alignment pass). What is not committed when it is destroyed is rolled back.
class WriteBatch {
 public:
  explicit WriteBatch(Database& db);
  ~WriteBatch();
  WriteBatch(const WriteBatch&) = delete;
  WriteBatch& operator=(const WriteBatch&) = delete;
  void commit();

 private:
  std::unique_ptr<SQLite::Transaction> transaction_;
};

// The schema version this build writes (the number of migrations it knows).
int current_schema_version();

}  // namespace factorwatch::storage
