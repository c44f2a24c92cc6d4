#include "factorwatch/storage/database.h"

#include <SQLiteCpp/SQLiteCpp.h>
#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <random>
#include <stdexcept>

#include "asset_directory.h"
#include "migrations.h"

namespace factorwatch::storage {
namespace {

// A busy timeout rather than failing at once: a refresh and a load may overlap, and
// each holds the write lock only for one window or one file.
constexpr int kBusyMilliseconds = 30000;

bool file_size(const std::string& path, long long& size) {
  struct stat info {};
  if (::stat(path.c_str(), &info) != 0) return false;
  size = static_cast<long long>(info.st_size);
  return true;
}

std::string directory_of(const std::string& path) {
  const auto slash = path.rfind('/');
  if (slash == std::string::npos) return ".";
  return slash == 0 ? "/" : path.substr(0, slash);
}

void remove_quietly(const std::string& path) {
  for (const char* suffix : {"", "-wal", "-shm", "-journal"}) ::unlink((path + suffix).c_str());
}

void configure(SQLite::Database& db) {
  db.exec("PRAGMA journal_mode = WAL");
  // With WAL, NORMAL loses no committed transaction on a process crash (kill -9); only
  // a power cut may drop the last commits, never corrupt the file (SQLite docs, WAL).
  db.exec("PRAGMA synchronous = NORMAL");
  db.exec("PRAGMA foreign_keys = ON");
  // Keep the -wal file from staying at the size of the largest ingest.
  db.exec("PRAGMA journal_size_limit = 67108864");
}

// A new database is built whole under a temporary name, owner-only (0600 whatever the
// umask; SQLite gives the -wal and -shm files the mode of the database file), and then
// given its name without replacing anything. So the name never holds a half-made file,
// two processes creating it at once get one database, and a 0-byte factorwatch.db can
// only be a damaged one (refused below), never a new one.
void create_database(const std::string& path) {
  std::random_device random;
  char tag[24];
  std::snprintf(tag, sizeof tag, ".new-%08x%08x", random(), random());
  const std::string temporary = path + tag;
  const int fd = ::open(temporary.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_NOFOLLOW | O_CLOEXEC, 0600);
  if (fd < 0) throw std::runtime_error("cannot create the database " + path + ": " + std::strerror(errno));
  const bool owner_only = ::fchmod(fd, 0600) == 0;
  ::close(fd);
  try {
    if (!owner_only) throw std::runtime_error(std::string("cannot make it owner-only: ") + std::strerror(errno));
    {
      SQLite::Database db(temporary, SQLite::OPEN_READWRITE, kBusyMilliseconds);
      configure(db);
      detail::migrate_to(db, current_schema_version());
    }  // the last connection closing folds the -wal into the file and removes it
    if (::renameat2(AT_FDCWD, temporary.c_str(), AT_FDCWD, path.c_str(), RENAME_NOREPLACE) != 0) {
      const int error = errno;
      if (error != EEXIST) {
        // A file system without RENAME_NOREPLACE: a hard link is just as exclusive.
        if (::link(temporary.c_str(), path.c_str()) != 0 && errno != EEXIST)
          throw std::runtime_error(std::string("cannot name it: ") + std::strerror(errno));
      }
      remove_quietly(temporary);  // another process created it first, or it is linked now
    }
  } catch (const std::exception& e) {
    remove_quietly(temporary);
    throw std::runtime_error("cannot create the database " + path + ": " + e.what());
  }
}

// The path as an SQLite URI (file:...), escaping what a URI gives a meaning to.
std::string uri_of(const std::string& path) {
  std::string out = "file:";
  for (unsigned char c : path) {
    if (c == '%' || c == '?' || c == '#' || c < 0x21 || c >= 0x7f) {
      char hex[4];
      std::snprintf(hex, sizeof hex, "%%%02X", c);
      out += hex;
    } else {
      out += static_cast<char>(c);
    }
  }
  return out;
}

bool readable(SQLite::Database& db) {
  try {
    db.execAndGet("SELECT count(*) FROM sqlite_schema");
    return true;
  } catch (const SQLite::Exception&) {
    return false;
  }
}

}  // namespace

int current_schema_version() { return detail::migrations().back().version; }

Database::Database(const std::string& path) : path_(path) {
  try {
    long long size = 0;
    if (!file_size(path, size)) {
      create_database(path);
      file_size(path, size);
    }
    long long log = 0;
    // An empty file whose -wal holds the pages (a database created and killed before its
    // first checkpoint) is a database; an empty file alone is a truncated one.
    if (size == 0 && !(file_size(path + "-wal", log) && log > 0))
      throw std::runtime_error("the database " + path +
                               " is an empty file (0 bytes): a truncated database is not taken as a new one; "
                               "restore it from a backup, or remove the file to start a new database");
    // Reading needs no write access: a read-only directory or file is opened read-only
    // (the reading commands work; a write fails with SQLite's "readonly database").
    read_only_ = ::access(path.c_str(), W_OK) != 0 || ::access(directory_of(path).c_str(), W_OK) != 0;
    if (!read_only_) {
      db_ = std::make_unique<SQLite::Database>(path, SQLite::OPEN_READWRITE, kBusyMilliseconds);
      configure(*db_);
      detail::migrate_to(*db_, current_schema_version());
      return;
    }
    open_read_only();
  } catch (const SQLite::Exception& e) {
    throw std::runtime_error("cannot open the database " + path + ": " + e.what());
  }
}

void Database::open_read_only() {
  db_ = std::make_unique<SQLite::Database>(path_, SQLite::OPEN_READONLY, kBusyMilliseconds);
  if (!readable(*db_)) {
    // WAL mode needs the -shm file, which a read-only directory cannot get. Without a
    // -wal holding commits the file alone is the whole database: SQLite may read it as
    // immutable (no locks, no -shm), which is right only because nothing can write here.
    long long log = 0;
    if (file_size(path_ + "-wal", log) && log > 0)
      throw std::runtime_error("the database " + path_ +
                               " is read-only here and its write-ahead log (-wal) holds commits that need its "
                               "shared-memory file (-shm), which cannot be created; open it once with write access");
    db_ = std::make_unique<SQLite::Database>(uri_of(path_) + "?immutable=1", SQLite::OPEN_READONLY | SQLite::OPEN_URI,
                                             kBusyMilliseconds);
    immutable_ = true;
  }
  db_->exec("PRAGMA query_only = 1");
  const int application_id = db_->execAndGet("PRAGMA application_id").getInt();
  const int version = detail::user_version(*db_);
  if (application_id != detail::kApplicationId)
    throw std::runtime_error("not a factorwatch database (" + path_ + ")");
  if (version > current_schema_version())
    throw std::runtime_error("the database is at schema version " + std::to_string(version) +
                             ", newer than this factorwatch understands (" + std::to_string(current_schema_version()) +
                             "); use a newer factorwatch (" + path_ + ")");
  if (version < current_schema_version())
    throw std::runtime_error("the database " + path_ + " is read-only here and at schema version " +
                             std::to_string(version) + "; this factorwatch needs " +
                             std::to_string(current_schema_version()) + ": open it once with write access to upgrade it");
}

Database::~Database() = default;

WriteBatch::WriteBatch(Database& db)
    : transaction_(std::make_unique<SQLite::Transaction>(db.sql(), SQLite::TransactionBehavior::IMMEDIATE)) {}

WriteBatch::~WriteBatch() = default;

void WriteBatch::commit() { transaction_->commit(); }

detail::AssetDirectory& Database::assets() {
  if (!assets_) assets_ = std::make_unique<detail::AssetDirectory>(*db_);
  return *assets_;
}

int Database::schema_version() const { return detail::user_version(*db_); }

}  // namespace factorwatch::storage
