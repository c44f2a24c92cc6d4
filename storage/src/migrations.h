// The schema as a list of forward migrations: migration i takes the database from
// version i - 1 to version i. PRAGMA user_version holds the version reached.
//
// Never edit a migration that has shipped: append a new one. Tests build a database at
// every earlier version (migrate_to) and check that opening it reaches the current one
// with its data intact.
#pragma once

#include <vector>

namespace SQLite {
class Database;
}

namespace factorwatch::storage::detail {

struct Migration {
  int version;          // reached after this step
  const char* purpose;  // one line, for the log and the docs
  const char* sql;      // one or more statements
  // Run after `sql` in the same transaction, for what SQL cannot compute (checksums).
  void (*backfill)(SQLite::Database&) = nullptr;
};

const std::vector<Migration>& migrations();

// SQLite's application_id for our files ("fwdb"), so that opening someone else's
// database is refused instead of being migrated.
inline constexpr int kApplicationId = 0x66776462;

// Applies the pending migrations up to `target` in one transaction. Throws when the
// database is newer than `target` or is not ours.
void migrate_to(SQLite::Database& db, int target);

int user_version(SQLite::Database& db);

}  // namespace factorwatch::storage::detail
