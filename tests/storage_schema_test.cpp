// The database file: WAL and foreign keys on, and forward migrations from every earlier
// schema version with the data kept.
#include <gtest/gtest.h>

#include <algorithm>

#include <SQLiteCpp/SQLiteCpp.h>

#include "factorwatch/storage/database.h"
#include "migrations.h"
#include "storage_fixtures.h"

namespace {

using factorwatch::storage::Database;
using factorwatch::storage::current_schema_version;
using factorwatch::testing::TempDir;
namespace detail = factorwatch::storage::detail;

TEST(StorageSchema, FreshDatabaseIsCurrentWithWalAndForeignKeys) {
  TempDir dir;
  Database db(dir.database());
  EXPECT_EQ(db.schema_version(), current_schema_version());
  EXPECT_EQ(db.sql().execAndGet("PRAGMA journal_mode").getString(), "wal");
  EXPECT_EQ(db.sql().execAndGet("PRAGMA foreign_keys").getInt(), 1);
  EXPECT_EQ(db.sql().execAndGet("PRAGMA application_id").getInt(), detail::kApplicationId);
  // A window must belong to a stored model version.
  EXPECT_THROW(db.sql().exec("INSERT INTO windows (model_version_id, as_of, first_date, configuration_hash, "
                             "input_hash, asset_count, factors, usable, termination, assets, mean, scale, loadings, "
                             "specific_variance, communality, uniqueness, heywood, factor_covariance, eigenvalues, "
                             "explained_share, statistics, fit_seconds, total_seconds, fitted_at) VALUES (99, 1, 1, "
                             "'', '', 0, 0, 0, '', x'', x'', x'', x'', x'', x'', x'', x'', x'', x'', x'', '{}', 0, 0, '')"),
               SQLite::Exception);
}

TEST(StorageSchema, MigrationsAreNumberedInOrder) {
  const auto& steps = detail::migrations();
  for (std::size_t i = 0; i < steps.size(); ++i) EXPECT_EQ(steps[i].version, static_cast<int>(i) + 1);
}

// The last schema whose rows fill() can write as they are: from schema 7 on, returns rows
// and matrix blobs carry checksums, which the migration to 7 computes.
constexpr int kLastUnsealedVersion = 6;

// Rows that a database at `version` can hold, so that migrating it shows they survive.
void fill(SQLite::Database& sql, int version) {
  if (version >= 1) {
    sql.exec("INSERT INTO assets (id, name, first_date, last_date) VALUES (1, 'ZQ-0001', 20240102, 20240103)");
    sql.exec("INSERT INTO returns (date, asset_ids, returns) VALUES (20240102, x'01000000', x'7b14ae47e17a843f')");
    sql.exec("INSERT INTO ingest_runs (file_name, content_sha256, loaded_at, layout, values_in_file, data_rows, "
             "values_new, values_unchanged, values_corrected, outcome, seconds) VALUES ('a.csv', 'ab', "
             "'2026-01-01T00:00:00Z', 'long', 'returns', 1, 1, 0, 0, 'new data', 0.1)");
  }
  if (version >= 2) {
    sql.exec("INSERT INTO models (id, name, created_at) VALUES (1, 'm', 'now')");
    sql.exec("INSERT INTO model_versions (id, model_id, version, configuration, configuration_hash, created_at) "
             "VALUES (1, 1, 1, '{}', 'h', 'now')");
    sql.exec("INSERT INTO windows (model_version_id, as_of, first_date, configuration_hash, input_hash, asset_count, "
             "factors, usable, termination, assets, mean, scale, loadings, specific_variance, communality, uniqueness, "
             "heywood, factor_covariance, eigenvalues, explained_share, statistics, fit_seconds, total_seconds, "
             "fitted_at) VALUES (1, 20240103, 20240102, 'h', 'i', 0, 1, 0, 'not_run', x'', x'', x'', x'', x'', x'', "
             "x'', x'', x'', x'', x'', '{}', 0, 0, 'now')");
  }
  if (version >= 6) {
    sql.exec("INSERT INTO portfolios (id, name, created_at) VALUES (1, 'p', 'now')");
    sql.exec("INSERT INTO holding_sets (id, portfolio_id, as_of, benchmark, source, content_sha256, stored_at) "
             "VALUES (1, 1, 20240103, NULL, 'p.csv', 'h', 'now')");
    sql.exec("INSERT INTO holdings (set_id, position, asset, weight) VALUES (1, 0, 'ZQ-0001', 0.5), "
             "(1, 1, 'ZQ-GONE', -0.25)");
  }
}

// Schema 6: a holding set belongs to a stored portfolio, and removing the portfolio takes
// its sets and their holdings with it (ON DELETE CASCADE, with foreign keys on).
TEST(StorageSchema, PortfolioRowsCascade) {
  TempDir dir;
  Database db(dir.database());
  SQLite::Database& sql = db.sql();
  EXPECT_THROW(sql.exec("INSERT INTO holding_sets (portfolio_id, as_of, source, content_sha256, stored_at) "
                        "VALUES (9, 20240103, 'p.csv', 'h', 'now')"),
               SQLite::Exception);
  fill(sql, 6);
  EXPECT_THROW(sql.exec("INSERT INTO holdings (set_id, position, asset, weight) VALUES (1, 2, 'ZQ-0001', 1)"),
               SQLite::Exception);  // each asset once per set
  sql.exec("DELETE FROM portfolios WHERE id = 1");
  EXPECT_EQ(sql.execAndGet("SELECT count(*) FROM holding_sets").getInt(), 0);
  EXPECT_EQ(sql.execAndGet("SELECT count(*) FROM holdings").getInt(), 0);
}

// Every earlier version, including a file with no tables (version 0), migrates to the current
// one on open and keeps its rows.
TEST(StorageSchema, MigratesFromEveryEarlierVersion) {
  for (int from = 0; from < current_schema_version(); ++from) {
    TempDir dir;
    {
      SQLite::Database sql(dir.database(), SQLite::OPEN_READWRITE | SQLite::OPEN_CREATE);
      // Version 0: an SQLite file with no tables (a 0-byte file is refused as truncated).
      if (from == 0) sql.exec("CREATE TABLE t (x); DROP TABLE t");
      // fill() writes rows as schema 6 stored them (no checksums); a file at a later version
      // gets them through the real migrations, as a database of that version holds them.
      const int raw = std::min(from, kLastUnsealedVersion);
      if (raw > 0) detail::migrate_to(sql, raw);
      fill(sql, raw);
      if (from > raw) detail::migrate_to(sql, from);
      ASSERT_EQ(detail::user_version(sql), from);
    }
    Database db(dir.database());
    EXPECT_EQ(db.schema_version(), current_schema_version()) << "from version " << from;
    SQLite::Database& sql = db.sql();
    const int expected_assets = from >= 1 ? 1 : 0;
    EXPECT_EQ(sql.execAndGet("SELECT count(*) FROM assets").getInt(), expected_assets) << "from " << from;
    EXPECT_EQ(sql.execAndGet("SELECT count(*) FROM returns").getInt(), expected_assets) << "from " << from;
    EXPECT_EQ(sql.execAndGet("SELECT count(*) FROM model_versions").getInt(), from >= 2 ? 1 : 0);
    // The newest tables exist and work.
    EXPECT_EQ(sql.execAndGet("SELECT count(*) FROM corrections").getInt(), 0);
    EXPECT_EQ(sql.execAndGet("SELECT count(*) FROM windows").getInt(), from >= 2 ? 1 : 0);
    // Schema 5: windows fitted before rotation existed have none (NULL), and no alignment
    // yet (the next refresh aligns them).
    if (from >= 2) {
      EXPECT_TRUE(sql.execAndGet("SELECT rotation FROM windows").isNull()) << "from " << from;
    }
    EXPECT_EQ(sql.execAndGet("SELECT count(*) FROM window_alignments").getInt(), 0);
    EXPECT_EQ(sql.execAndGet("SELECT count(*) FROM window_drift").getInt(), 0);
    EXPECT_EQ(sql.execAndGet("SELECT count(*) FROM drift_alerts").getInt(), 0);
    // Schema 6: portfolios; a holding names an asset by text, stored returns or not.
    EXPECT_EQ(sql.execAndGet("SELECT count(*) FROM portfolios").getInt(), from >= 6 ? 1 : 0);
    EXPECT_EQ(sql.execAndGet("SELECT count(*) FROM holding_sets").getInt(), from >= 6 ? 1 : 0);
    EXPECT_EQ(sql.execAndGet("SELECT count(*) FROM holdings").getInt(), from >= 6 ? 2 : 0);
    if (from >= 1) {
      EXPECT_EQ(sql.execAndGet("SELECT name FROM assets WHERE id = 1").getString(), "ZQ-0001");
    }
    // Schema 7: every returns row and matrix blob carries its checksum (8 bytes appended).
    EXPECT_EQ(sql.execAndGet("SELECT count(*) FROM returns WHERE checksum IS NULL").getInt(), 0) << "from " << from;
    if (from >= 2) {
      EXPECT_EQ(sql.execAndGet("SELECT length(loadings) FROM windows").getInt(), 8) << "from " << from;
    }
    // Schema 8: a window fitted before provenance was recorded has none (NULL: not known).
    if (from >= 2) {
      EXPECT_TRUE(sql.execAndGet("SELECT provenance FROM windows").isNull()) << "from " << from;
    }
  }
}

TEST(StorageSchema, RefusesANewerSchema) {
  TempDir dir;
  { Database db(dir.database()); db.sql().exec("PRAGMA user_version = " + std::to_string(current_schema_version() + 1)); }
  try {
    Database db(dir.database());
    FAIL() << "opened a database from a newer version";
  } catch (const std::runtime_error& e) {
    EXPECT_NE(std::string(e.what()).find("newer"), std::string::npos) << e.what();
  }
}

TEST(StorageSchema, RefusesSomeoneElsesDatabaseAndNonDatabases) {
  TempDir dir;
  {
    SQLite::Database other(dir.file("other.db"), SQLite::OPEN_READWRITE | SQLite::OPEN_CREATE);
    other.exec("CREATE TABLE t (x)");
  }
  try {
    Database db(dir.file("other.db"));
    FAIL() << "opened a foreign database";
  } catch (const std::runtime_error& e) {
    EXPECT_NE(std::string(e.what()).find("not a factorwatch database"), std::string::npos) << e.what();
  }
  factorwatch::testing::write_text(dir.file("text.db"), "date,asset,return\n2024-01-02,ZQ-0001,0.01\n");
  EXPECT_THROW(Database(dir.file("text.db")), std::runtime_error);
}

}  // namespace
