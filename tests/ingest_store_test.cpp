// Storing returns files: exact values, re-loads that change nothing, corrections that
// are recorded and mark the windows they touch, and rejected files that leave the
// database byte for byte as it was.
#include <gtest/gtest.h>

#include <SQLiteCpp/SQLiteCpp.h>

#include <cmath>
#include <cstring>

#include "factorwatch/pipeline/refresh.h"
#include "factorwatch/pipeline/served_windows.h"
#include "factorwatch/storage/content_hash.h"
#include "factorwatch/storage/ingest.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/returns_csv.h"
#include "factorwatch/storage/returns_span.h"
#include "factorwatch/storage/windows.h"
#include "simulated_model.h"
#include "storage_fixtures.h"

namespace {

using namespace factorwatch;
namespace testing = factorwatch::testing;
using factorwatch::testing::TempDir;

storage::LoadSummary load(storage::Database& db, const std::string& path) {
  storage::ReturnsFile file = storage::read_returns_file(path, {});
  storage::IngestSource source;
  source.path = path;
  source.layout = file.layout;
  source.data_rows = file.data_rows;
  source.content_sha256 = storage::file_sha256(path);
  return storage::store_returns(db, file.panel, source);
}

engine::ReturnsPanel stored_panel(storage::Database& db) {
  const auto dates = storage::stored_dates(db);
  storage::ReturnsSpan span(db, dates.front(), dates.back(), {});
  return span.window(0, dates.size());
}

// Every row of the returns table, as bytes, to compare database states.
std::string returns_table(storage::Database& db) {
  std::string out;
  SQLite::Statement q(db.sql(), "SELECT date, asset_ids, returns FROM returns ORDER BY date");
  while (q.executeStep()) {
    out += std::to_string(q.getColumn(0).getInt()) + ":";
    out.append(static_cast<const char*>(q.getColumn(1).getBlob()), static_cast<std::size_t>(q.getColumn(1).getBytes()));
    out.append(static_cast<const char*>(q.getColumn(2).getBlob()), static_cast<std::size_t>(q.getColumn(2).getBytes()));
  }
  return out;
}

engine::ReturnsPanel planted(int T, int N, unsigned seed) {
  engine::ReturnsPanel p = testing::simulate_planted_model(T, N, 2, seed).panel;
  p.dates = testing::business_dates(T);
  return p;
}

TEST(IngestStore, StoresEveryValueExactly) {
  TempDir dir;
  engine::ReturnsPanel p = planted(40, 12, 3);
  p.values(5, 3) = std::numeric_limits<double>::quiet_NaN();  // a gap stays a gap
  testing::write_long_csv(dir.file("r.csv"), p);
  storage::Database db(dir.database());
  const auto s = load(db, dir.file("r.csv"));
  EXPECT_EQ(s.outcome, "new data");
  EXPECT_EQ(s.values_new, 40u * 12 - 1);
  EXPECT_EQ(s.new_assets, 12u);
  const engine::ReturnsPanel back = stored_panel(db);
  ASSERT_EQ(back.assets, p.assets);
  ASSERT_EQ(back.dates, p.dates);
  for (Eigen::Index t = 0; t < p.periods(); ++t)
    for (Eigen::Index i = 0; i < p.width(); ++i) {
      if (std::isnan(p.values(t, i))) {
        EXPECT_TRUE(std::isnan(back.values(t, i)));
      } else {
        EXPECT_EQ(back.values(t, i), p.values(t, i));  // bit for bit: %.17g round-trips
      }
    }
  SQLite::Statement run(db.sql(), "SELECT content_sha256, layout, values_new, outcome FROM ingest_runs");
  ASSERT_TRUE(run.executeStep());
  EXPECT_EQ(run.getColumn(0).getString(), storage::file_sha256(dir.file("r.csv")));
  EXPECT_EQ(run.getColumn(2).getInt(), 40 * 12 - 1);
  SQLite::Statement span(db.sql(), "SELECT first_date, last_date FROM assets WHERE name = ?");
  span.bind(1, p.assets[0]);
  ASSERT_TRUE(span.executeStep());
  EXPECT_EQ(span.getColumn(0).getInt(), 20210104);
}

TEST(IngestStore, ReloadingTheSameFileChangesNoReturn) {
  TempDir dir;
  testing::write_long_csv(dir.file("r.csv"), planted(30, 8, 4));
  storage::Database db(dir.database());
  load(db, dir.file("r.csv"));
  const std::string before = returns_table(db);
  const auto again = load(db, dir.file("r.csv"));
  EXPECT_EQ(again.outcome, "no change");
  EXPECT_EQ(again.values_new, 0u);
  EXPECT_EQ(again.values_corrected, 0u);
  EXPECT_EQ(again.values_unchanged, 30u * 8);
  EXPECT_EQ(returns_table(db), before);
  EXPECT_EQ(db.sql().execAndGet("SELECT count(*) FROM ingest_runs").getInt(), 2);  // the audit shows both loads
}

TEST(IngestStore, MissingCellsNeverEraseStoredReturns) {
  TempDir dir;
  testing::write_long_csv(dir.file("r.csv"), planted(10, 3, 5));
  storage::Database db(dir.database());
  load(db, dir.file("r.csv"));
  const std::string before = returns_table(db);
  const auto dates = testing::iso_texts(testing::business_dates(2));
  testing::write_text(dir.file("gaps.csv"), "date,asset,return\n" + dates[1] + ",ZQ-none,\n");
  testing::write_text(dir.file("gaps_wide.csv"), "date,a0,a1\n" + dates[1] + ",,\n");
  load(db, dir.file("gaps_wide.csv"));
  EXPECT_EQ(returns_table(db), before);
}

// A changed past value is applied, kept in the corrections table with the old value,
// and marks stale exactly the stored windows whose dates cover it.
TEST(IngestStore, CorrectionIsRecordedAndMarksCoveringWindowsStale) {
  TempDir dir;
  engine::ReturnsPanel p = planted(60, 10, 6);
  testing::write_long_csv(dir.file("r.csv"), p);
  storage::Database db(dir.database());
  load(db, dir.file("r.csv"));
  storage::ModelConfig config;
  config.fit.method = engine::Method::pca;
  config.fit.factors = 2;
  config.window = 20;
  config.step = 5;
  storage::set_model(db, "m", config);
  const auto refreshed = pipeline::refresh_model(db, "m");
  ASSERT_EQ(refreshed.fitted, 9u);  // as-of indices 19, 24, ..., 59

  // Correct the return of asset a3 on date index 30: windows ending at 34..49 hold it.
  const std::string date = p.dates[30].iso();
  testing::write_text(dir.file("fix.csv"), "date,asset,return\n" + date + "," + p.assets[3] + ",0.0123\n");
  const auto s = load(db, dir.file("fix.csv"));
  EXPECT_EQ(s.outcome, "correction");
  EXPECT_EQ(s.values_corrected, 1u);
  EXPECT_EQ(s.windows_marked_stale, 4u);  // as-of indices 34, 39, 44, 49
  SQLite::Statement c(db.sql(), "SELECT old_value, new_value FROM corrections");
  ASSERT_TRUE(c.executeStep());
  EXPECT_EQ(c.getColumn(0).getDouble(), p.values(30, 3));
  EXPECT_EQ(c.getColumn(1).getDouble(), 0.0123);

  const auto model = storage::find_model(db, "m");
  int stale = 0;
  for (const auto& w : storage::list_windows(db, model->id)) stale += w.stale;
  EXPECT_EQ(stale, 4);
  const auto again = pipeline::refresh_model(db, "m");
  EXPECT_EQ(again.fitted, 4u);
  EXPECT_EQ(again.refitted_stale, 4u);
  for (const auto& w : storage::list_windows(db, model->id)) EXPECT_FALSE(w.stale) << w.as_of;
  // The refitted window saw the corrected value: its input fingerprint changed.
  const auto window = pipeline::read_served_window(db, model->id, p.dates[34], false);
  ASSERT_TRUE(window);
  EXPECT_EQ(window->fit.assets.size(), 10u);
}

// The all-or-nothing rule at the byte level: the command rejects a bad file before it
// opens the database, so neither the database file nor its write-ahead log changes.
TEST(IngestStore, RejectedFileLeavesTheDatabaseFileUnchanged) {
  TempDir dir;
  testing::write_long_csv(dir.file("good.csv"), planted(20, 5, 7));
  ASSERT_EQ(testing::run_factorwatch(dir.path(), "load " + dir.file("good.csv")).status, 0);
  const std::string db_before = testing::read_bytes(dir.database());
  const std::string wal_before = testing::read_bytes(dir.database() + "-wal");
  const auto dates = testing::iso_texts(testing::business_dates(25));
  // Valid rows first, then one bad number: nothing of the file may land.
  testing::write_text(dir.file("bad.csv"), "date,asset,return\n" + dates[21] + ",ZQ-9,0.01\n" + dates[22] +
                                               ",ZQ-9,0.02\n" + dates[23] + ",ZQ-9,zero\n");
  const auto r = testing::run_factorwatch(dir.path(), "load " + dir.file("bad.csv"));
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("bad.csv:4: field 'return'"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("database is unchanged"), std::string::npos) << r.err;
  EXPECT_EQ(testing::read_bytes(dir.database()), db_before);
  EXPECT_EQ(testing::read_bytes(dir.database() + "-wal"), wal_before);
}

}  // namespace
