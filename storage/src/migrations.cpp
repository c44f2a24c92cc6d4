#include "migrations.h"

#include <SQLiteCpp/SQLiteCpp.h>

#include <stdexcept>
#include <string>
#include <utility>

#include "blob_codec.h"
#include "returns_rows.h"

namespace factorwatch::storage::detail {
namespace {

// Schema 7: the checksum of every existing returns row.
void checksum_returns(SQLite::Database& db) {
  SQLite::Statement read(db, "SELECT date, asset_ids, returns FROM returns");
  SQLite::Statement write(db, "UPDATE returns SET checksum = ? WHERE date = ?");
  std::vector<std::pair<std::int32_t, std::int64_t>> sums;
  while (read.executeStep()) {
    const SQLite::Column ids = read.getColumn(1), values = read.getColumn(2);
    const void* id_data = ids.getBlob();
    const auto id_bytes = static_cast<std::size_t>(ids.getBytes());
    const void* value_data = values.getBlob();
    const auto value_bytes = static_cast<std::size_t>(values.getBytes());
    const std::int32_t date = read.getColumn(0).getInt();
    sums.emplace_back(date, row_checksum(date, id_data, id_bytes, value_data, value_bytes));
  }
  for (const auto& [date, sum] : sums) {
    write.bind(1, sum);
    write.bind(2, date);
    write.exec();
    write.reset();
  }
}

// Schema 7: seals every matrix blob of `table` with its checksum (blob_codec.h), a row at
// a time (a window's blobs are megabytes; never all in memory at once).
void seal_columns(SQLite::Database& db, const char* table, const std::vector<const char*>& columns) {
  std::vector<std::int64_t> rows;
  {
    SQLite::Statement q(db, std::string("SELECT rowid FROM ") + table);
    while (q.executeStep()) rows.push_back(q.getColumn(0).getInt64());
  }
  std::string list, assignments;
  for (const char* c : columns) {
    list += (list.empty() ? "" : ", ") + std::string(c);
    assignments += (assignments.empty() ? "" : ", ") + std::string(c) + " = ?";
  }
  SQLite::Statement read(db, "SELECT " + list + " FROM " + table + " WHERE rowid = ?");
  SQLite::Statement write(db, "UPDATE " + std::string(table) + " SET " + assignments + " WHERE rowid = ?");
  const int n = static_cast<int>(columns.size());
  for (std::int64_t row : rows) {
    read.bind(1, row);
    if (!read.executeStep()) continue;
    for (int c = 0; c < n; ++c) {
      const SQLite::Column column = read.getColumn(c);
      if (column.isNull()) {
        write.bind(c + 1);  // an absent rotation stays absent
        continue;
      }
      const char* data = static_cast<const char*>(column.getBlob());
      std::string sealed(data, data + column.getBytes());
      seal_blob(sealed);
      write.bind(c + 1, sealed.data(), static_cast<int>(sealed.size()));
    }
    read.reset();
    write.bind(n + 1, row);
    write.exec();
    write.reset();
  }
}

void checksum_everything(SQLite::Database& db) {
  checksum_returns(db);
  seal_columns(db, "windows",
               {"assets", "mean", "scale", "loadings", "specific_variance", "communality", "uniqueness", "heywood",
                "factor_covariance", "eigenvalues", "explained_share", "rotation"});
  seal_columns(db, "window_alignments", {"alignment", "factor_fit"});
  seal_columns(db, "window_drift",
               {"congruence", "principal_angles", "factor_variance_change", "explained_share_change"});
}

}  // namespace

// Dates are INTEGER yyyymmdd (they sort as dates and take 4 bytes). Vectors and
// matrices are BLOBs in the layout of blob_codec.h.
const std::vector<Migration>& migrations() {
  static const std::vector<Migration> steps = {
      {1, "assets, returns by date, ingest runs", R"sql(
CREATE TABLE assets (
  id         INTEGER PRIMARY KEY,
  name       TEXT NOT NULL UNIQUE,
  first_date INTEGER,              -- first date with a stored return
  last_date  INTEGER               -- last date with a stored return
);
-- One row per date: the day's cross-section. A window read is all assets over a range
-- of dates, and a nightly file arrives date by date, so the date is the key.
CREATE TABLE returns (
  date      INTEGER PRIMARY KEY,   -- yyyymmdd
  asset_ids BLOB NOT NULL,         -- int32 little-endian, ascending
  returns   BLOB NOT NULL          -- float64 little-endian, same order; no missing values
);
CREATE TABLE ingest_runs (
  id               INTEGER PRIMARY KEY,
  file_name        TEXT NOT NULL,
  content_sha256   TEXT NOT NULL,
  loaded_at        TEXT NOT NULL,  -- UTC, ISO 8601
  layout           TEXT NOT NULL,  -- long | wide
  values_in_file   TEXT NOT NULL,  -- returns | prices (simple returns) | prices (log returns)
  data_rows        INTEGER NOT NULL,
  first_date       INTEGER,
  last_date        INTEGER,
  values_new       INTEGER NOT NULL,
  values_unchanged INTEGER NOT NULL,
  values_corrected INTEGER NOT NULL,
  outcome          TEXT NOT NULL,  -- new data | correction | no change
  seconds          REAL NOT NULL
);
)sql"},
      {2, "models, model versions, fitted windows", R"sql(
CREATE TABLE models (
  id         INTEGER PRIMARY KEY,
  name       TEXT NOT NULL UNIQUE,
  created_at TEXT NOT NULL
);
-- A changed configuration is a new version; windows keep the version they were fitted with.
CREATE TABLE model_versions (
  id                 INTEGER PRIMARY KEY,
  model_id           INTEGER NOT NULL REFERENCES models(id),
  version            INTEGER NOT NULL,
  configuration      TEXT NOT NULL,   -- JSON
  configuration_hash TEXT NOT NULL,
  created_at         TEXT NOT NULL,
  UNIQUE (model_id, version)
);
CREATE TABLE windows (
  id                 INTEGER PRIMARY KEY,
  model_version_id   INTEGER NOT NULL REFERENCES model_versions(id),
  as_of              INTEGER NOT NULL,  -- last date of the window
  first_date         INTEGER NOT NULL,
  configuration_hash TEXT NOT NULL,
  input_hash         TEXT NOT NULL,     -- of the returns panel the fit saw
  asset_count        INTEGER NOT NULL,
  factors            INTEGER NOT NULL,
  usable             INTEGER NOT NULL,  -- FactorFit::IsSolutionUsable
  termination        TEXT NOT NULL,
  assets             BLOB NOT NULL,     -- int32 asset ids, the fitted assets in order
  mean               BLOB NOT NULL,
  scale              BLOB NOT NULL,
  loadings           BLOB NOT NULL,
  specific_variance  BLOB NOT NULL,
  communality        BLOB NOT NULL,
  uniqueness         BLOB NOT NULL,
  heywood            BLOB NOT NULL,
  factor_covariance  BLOB NOT NULL,
  eigenvalues        BLOB NOT NULL,
  explained_share    BLOB NOT NULL,
  statistics         TEXT NOT NULL,     -- JSON: scalars, excluded assets, solver path
  fit_seconds        REAL NOT NULL,
  total_seconds      REAL NOT NULL,
  fitted_at          TEXT NOT NULL,
  stale              INTEGER NOT NULL DEFAULT 0,
  UNIQUE (model_version_id, as_of)
);
)sql"},
      {3, "audit of corrected returns", R"sql(
CREATE TABLE corrections (
  run_id    INTEGER NOT NULL REFERENCES ingest_runs(id),
  date      INTEGER NOT NULL,
  asset_id  INTEGER NOT NULL REFERENCES assets(id),
  old_value REAL NOT NULL,
  new_value REAL NOT NULL
);
CREATE INDEX corrections_by_run ON corrections (run_id);
CREATE INDEX windows_by_date ON windows (first_date, as_of);
)sql"},
      // The daemon asks "which fit is the window at or before this date" on every read,
      // and lists count windows: a covering index answers both without walking the
      // overflow pages of a row's matrices (the stamp columns come after them).
      {4, "covering index for window stamps and counts", R"sql(
CREATE INDEX windows_stamp ON windows (model_version_id, as_of, id, fitted_at, input_hash, total_seconds, stale);
)sql"},
      // Rotation, alignment between windows and drift. A window's row keeps the fit as the
      // engine returned it; the served factors are that fit times the rotation T and the
      // alignment R, so a window can be realigned (when an earlier one is refitted) without
      // refitting it.
      {5, "rotation, alignment and drift of windows", R"sql(
ALTER TABLE windows ADD COLUMN rotation BLOB;  -- k x k T of the model's rotation; NULL = none
CREATE TABLE window_alignments (
  window_id       INTEGER PRIMARY KEY REFERENCES windows(id),
  status          TEXT NOT NULL,     -- aligned | no reference | too few shared assets | ...
  message         TEXT NOT NULL,
  reference       TEXT NOT NULL,     -- previous | pinned | smoothed
  reference_as_of INTEGER,           -- the reference window; NULL for smoothed or none
  shared          INTEGER NOT NULL,  -- assets both windows have
  alignment       BLOB NOT NULL,     -- k x k orthogonal R (identity unless aligned)
  residual        REAL,              -- ||A R - B|| / ||B|| on the shared assets; NULL unless aligned
  factor_fit      BLOB NOT NULL,     -- per factor congruence with the reference after alignment
  aligned_at      TEXT NOT NULL
);
CREATE TABLE window_drift (
  window_id            INTEGER NOT NULL REFERENCES windows(id),
  against              TEXT NOT NULL,     -- previous | pinned
  against_as_of        INTEGER NOT NULL,
  status               TEXT NOT NULL,
  shared               INTEGER NOT NULL,
  congruence           BLOB NOT NULL,     -- per factor (Tucker)
  principal_angles     BLOB NOT NULL,     -- degrees, ascending
  factor_variance_change BLOB NOT NULL,
  explained_share_change BLOB NOT NULL,
  mean_exposure_change REAL NOT NULL,     -- mean over shared assets of |standardized row change|
  communality_change   REAL NOT NULL,     -- mean absolute change, return units
  movers               TEXT NOT NULL,     -- JSON: per factor, the assets that moved most
  PRIMARY KEY (window_id, against)
);
CREATE TABLE drift_alerts (
  window_id  INTEGER NOT NULL REFERENCES windows(id),
  against    TEXT NOT NULL,
  factor     INTEGER NOT NULL,  -- 1-based
  congruence REAL NOT NULL,
  threshold  REAL NOT NULL,
  PRIMARY KEY (window_id, against, factor)
);
)sql"},
      // Portfolios and benchmarks: a name, one holding set per as-of date, and the set's
      // holdings in file order. Holdings name assets by text, not by assets(id): a file
      // may name assets with no stored returns (delisted, not loaded yet, a typo), and the
      // risk report lists those rather than the store refusing them.
      {6, "portfolios and their holdings", R"sql(
CREATE TABLE portfolios (
  id         INTEGER PRIMARY KEY,
  name       TEXT NOT NULL UNIQUE,
  created_at TEXT NOT NULL
);
CREATE TABLE holding_sets (
  id             INTEGER PRIMARY KEY,
  portfolio_id   INTEGER NOT NULL REFERENCES portfolios(id) ON DELETE CASCADE,
  as_of          INTEGER NOT NULL,  -- yyyymmdd, the date the holdings are for
  benchmark      TEXT,              -- a portfolio's name (need not be stored yet); NULL = none
  source         TEXT NOT NULL,     -- the file, or the label of an upload
  content_sha256 TEXT NOT NULL,     -- of the holdings and the benchmark, canonical text
  stored_at      TEXT NOT NULL,     -- UTC, ISO 8601
  UNIQUE (portfolio_id, as_of)
);
CREATE TABLE holdings (
  set_id   INTEGER NOT NULL REFERENCES holding_sets(id) ON DELETE CASCADE,
  position INTEGER NOT NULL,        -- 0-based, the file's order
  asset    TEXT NOT NULL,           -- the name as the file gives it
  weight   REAL NOT NULL,
  PRIMARY KEY (set_id, position),
  UNIQUE (set_id, asset)
) WITHOUT ROWID;
)sql"},
      // Checksums, so that a damaged row is reported instead of crashing a reader or being
      // served as a wrong number (PRAGMA integrity_check sees only SQLite's own structure,
      // not a flipped bit inside a value). Every matrix blob ends in the 8-byte checksum of
      // its bytes (blob_codec.h); a returns row has one checksum of its date and its two
      // blobs, in a column of its own that an index covers, so that a refresh can tell
      // cheaply whether a window's rows changed after it read them (refresh.h).
      {7, "checksums of returns rows and matrix blobs", R"sql(
ALTER TABLE returns ADD COLUMN checksum INTEGER;  -- row_checksum (returns_rows.h); NULL = damaged
CREATE INDEX returns_checksums ON returns (date, checksum);
)sql", checksum_everything},
      // What built each window's numbers (engine/build_info.h), as one JSON object with the
      // members program, eigen, spectra and build; NULL for windows fitted before schema 8.
      {8, "provenance of fitted windows", R"sql(
ALTER TABLE windows ADD COLUMN provenance TEXT;
)sql"},
      // A model's window holds the stored dates on which enough of its universe traded
      // (refresh.h, "The calendar"); the other stored dates between its first and its
      // as-of date are kept here so that the window's returns can be read again exactly
      // (factor scores, residuals). NULL: none skipped, as for every window before schema 9.
      {9, "stored dates a window skipped", R"sql(
ALTER TABLE windows ADD COLUMN skipped_dates BLOB;  -- encode_int32s of yyyymmdd keys, ascending
)sql"},
  };
  return steps;
}

int user_version(SQLite::Database& db) { return db.execAndGet("PRAGMA user_version").getInt(); }

void migrate_to(SQLite::Database& db, int target) {
  const std::string where = " (" + db.getFilename() + ")";
  const int application_id = db.execAndGet("PRAGMA application_id").getInt();
  const int tables = db.execAndGet("SELECT count(*) FROM sqlite_schema").getInt();
  if (application_id != kApplicationId && (application_id != 0 || tables != 0))
    throw std::runtime_error("not a factorwatch database" + where);
  const int version = user_version(db);
  if (version > target)
    throw std::runtime_error("the database is at schema version " + std::to_string(version) +
                             ", newer than this factorwatch understands (" + std::to_string(target) +
                             "); use a newer factorwatch" + where);
  if (version == target) return;
  // IMMEDIATE: two processes opening a fresh file at once must not both migrate it.
  SQLite::Transaction transaction(db, SQLite::TransactionBehavior::IMMEDIATE);
  const int locked_version = user_version(db);
  for (const Migration& m : migrations()) {
    if (m.version <= locked_version || m.version > target) continue;
    db.exec(m.sql);
    if (m.backfill) m.backfill(db);
    db.exec("PRAGMA user_version = " + std::to_string(m.version));
  }
  db.exec("PRAGMA application_id = " + std::to_string(kApplicationId));
  transaction.commit();
}

}  // namespace factorwatch::storage::detail
