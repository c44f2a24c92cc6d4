// A model's life: deleting a model with everything fitted for it, pruning the versions a
// change superseded, renaming, and what a nightly refresh of every model does when one of
// them is broken (storage/model_lifecycle.h, factorwatch model delete|prune|rename).
#include <gtest/gtest.h>

#include <SQLiteCpp/SQLiteCpp.h>

#include <string>

#include "factorwatch/pipeline/refresh.h"
#include "factorwatch/storage/ingest.h"
#include "factorwatch/storage/model_lifecycle.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/windows.h"
#include "simulated_model.h"
#include "storage_fixtures.h"
#include "stored_returns.h"

namespace {

using namespace factorwatch;
namespace fw = factorwatch::testing;

long long count(storage::Database& db, const std::string& sql) {
  return db.sql().execAndGet(sql).getInt64();
}

// Rows of the tables a model's windows fill, for the windows of model `name`.
long long rows_of(storage::Database& db, const std::string& table, const std::string& name) {
  const std::string windows = "SELECT w.id FROM windows w JOIN model_versions v ON v.id = w.model_version_id "
                              "JOIN models m ON m.id = v.model_id WHERE m.name = '" + name + "'";
  if (table == "windows") return count(db, "SELECT count(*) FROM (" + windows + ")");
  return count(db, "SELECT count(*) FROM " + table + " WHERE window_id IN (" + windows + ")");
}

storage::ModelConfig config(int factors) {
  storage::ModelConfig c;
  c.fit.method = engine::Method::pca;
  c.fit.factors = factors;
  c.window = 60;
  c.step = 10;
  c.alert_below = 0.999;  // alerts on most windows: rows in drift_alerts to delete
  return c;
}

class ModelLifecycle : public ::testing::Test {
 protected:
  void SetUp() override {
    engine::ReturnsPanel p = fw::simulate_planted_model(120, 20, 2, 20261205u).panel;
    p.dates = fw::business_dates(120);
    fw::write_long_csv(dir.file("r.csv"), p);
    dates = p.dates;
    storage::Database db(dir.database());
    fw::load_returns(db, dir.file("r.csv"));
    for (const char* name : {"a", "b"}) {
      storage::set_model(db, name, config(2));
      pipeline::refresh_model(db, name);
      storage::set_model(db, name, config(3));  // version 2
      pipeline::refresh_model(db, name);
    }
  }
  fw::TempDir dir;
  std::vector<engine::Date> dates;
};

TEST_F(ModelLifecycle, DeletingAModelTakesEveryVersionWindowAlignmentDriftRowAndAlertAndNothingElse) {
  storage::Database db(dir.database());
  for (const char* table : {"windows", "window_alignments", "window_drift", "drift_alerts"})
    ASSERT_GT(rows_of(db, table, "a"), 0) << table;
  const long long b_windows = rows_of(db, "windows", "b"), b_alerts = rows_of(db, "drift_alerts", "b");
  const long long returns = count(db, "SELECT count(*) FROM returns");
  const long long a_windows = rows_of(db, "windows", "a");

  const auto removed = storage::delete_model(db, "a");
  ASSERT_TRUE(removed);
  EXPECT_EQ(removed->versions, 2u);
  EXPECT_EQ(static_cast<long long>(removed->windows), a_windows);
  EXPECT_FALSE(storage::find_model(db, "a"));
  for (const char* table : {"windows", "window_alignments", "window_drift", "drift_alerts"})
    EXPECT_EQ(rows_of(db, table, "a"), 0) << table;
  EXPECT_EQ(count(db, "SELECT count(*) FROM models WHERE name = 'a'"), 0);
  // No row left pointing at a deleted window or version (the foreign keys hold).
  EXPECT_EQ(count(db, "SELECT count(*) FROM window_drift WHERE window_id NOT IN (SELECT id FROM windows)"), 0);
  EXPECT_EQ(count(db, "SELECT count(*) FROM windows WHERE model_version_id NOT IN (SELECT id FROM model_versions)"), 0);
  EXPECT_EQ(rows_of(db, "windows", "b"), b_windows);
  EXPECT_EQ(rows_of(db, "drift_alerts", "b"), b_alerts);
  EXPECT_EQ(count(db, "SELECT count(*) FROM returns"), returns);
  EXPECT_FALSE(storage::delete_model(db, "a"));  // gone: nothing to delete
  // The name is free again, from version 1.
  EXPECT_EQ(storage::set_model(db, "a", config(2)).model.version, 1);
}

TEST_F(ModelLifecycle, PruningKeepsTheCurrentVersionAndItsWindowsOnly) {
  storage::Database db(dir.database());
  const auto current = storage::find_model(db, "a");
  const auto kept = storage::list_windows(db, current->id);
  const long long all = rows_of(db, "windows", "a");
  const auto removed = storage::prune_model(db, "a");
  ASSERT_TRUE(removed);
  EXPECT_EQ(removed->versions, 1u);
  EXPECT_EQ(static_cast<long long>(removed->windows), all - static_cast<long long>(kept.size()));
  EXPECT_EQ(rows_of(db, "windows", "a"), static_cast<long long>(kept.size()));
  EXPECT_EQ(storage::find_model(db, "a")->version, 2);
  EXPECT_EQ(storage::list_windows(db, current->id).size(), kept.size());
  EXPECT_EQ(count(db, "SELECT count(*) FROM model_versions v JOIN models m ON m.id = v.model_id WHERE m.name = 'a'"), 1);
  // Nothing more to prune; the next change is version 3.
  EXPECT_EQ(storage::prune_model(db, "a")->versions, 0u);
  EXPECT_EQ(storage::set_model(db, "a", config(1)).model.version, 3);
}

TEST_F(ModelLifecycle, RenamingMovesEveryVersionAndWindowAndRefusesATakenOrBadName) {
  storage::Database db(dir.database());
  const auto before = storage::find_model(db, "a");
  ASSERT_TRUE(storage::rename_model(db, "a", "a.v2"));
  EXPECT_FALSE(storage::find_model(db, "a"));
  const auto after = storage::find_model(db, "a.v2");
  ASSERT_TRUE(after);
  EXPECT_EQ(after->id, before->id);
  EXPECT_EQ(after->version, 2);
  EXPECT_EQ(storage::list_windows(db, after->id).size(), storage::list_windows(db, before->id).size());
  EXPECT_THROW(storage::rename_model(db, "a.v2", "b"), std::invalid_argument);
  EXPECT_THROW(storage::rename_model(db, "a.v2", "no spaces"), std::invalid_argument);
  EXPECT_FALSE(storage::rename_model(db, "a", "c"));
}

// A correction inside the windows marks the windows of both versions stale, but counts
// only the current version's: a superseded version's windows are never refitted.
TEST_F(ModelLifecycle, TheStaleCountOfALoadLeavesSupersededVersionsOut) {
  storage::Database db(dir.database());
  fw::write_text(dir.file("fix.csv"), "date,asset,return\n" + dates[100].iso() + ",P1000,0.0123\n");
  storage::ReturnsFile file = storage::read_returns_file(dir.file("fix.csv"), {});
  storage::IngestSource source{dir.file("fix.csv"), file.layout, "returns", file.data_rows, file.content_sha256};
  const storage::LoadSummary s = storage::store_returns(db, file.panel, source);
  // Windows of 60 dates every 10 from index 59: those as of 109 and 119 hold index 100.
  EXPECT_EQ(s.windows_marked_stale, 2u * 2u);  // models a and b, current version each
  EXPECT_EQ(count(db, "SELECT count(*) FROM windows WHERE stale = 1"), 2 * 2 * 2);  // both versions marked
}

// The nightly story: one broken model must not stop the others. `refresh` of every
// model refreshes the good one, names the broken one and exits 1; once the broken one is
// deleted, the night is clean again.
TEST_F(ModelLifecycle, ABrokenModelFailsOnlyItselfAndDeletingItEndsTheFailure) {
  fw::write_text(dir.file("universe.txt"), "ZQ-NOT-STORED-1\nZQ-NOT-STORED-2\nZQ-NOT-STORED-3\n");
  ASSERT_EQ(fw::run_factorwatch(dir.path(), "model set broken --method pca --factors 1 --window 60 --universe " +
                                                dir.file("universe.txt"))
                .status,
            0);
  fw::write_text(dir.file("night.csv"), "date,asset,return\n" + fw::business_dates(121).back().iso() + ",P1000,0.001\n");
  ASSERT_EQ(fw::run_factorwatch(dir.path(), "load " + dir.file("night.csv")).status, 0);
  auto r = fw::run_factorwatch(dir.path(), "refresh");
  EXPECT_EQ(r.status, 1) << r.out << r.err;
  EXPECT_NE(r.err.find("factorwatch refresh broken: model 'broken': none of its 3 universe assets has stored returns"),
            std::string::npos)
      << r.err;
  EXPECT_NE(r.out.find("a (version 2): "), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("b (version 2): "), std::string::npos) << r.out;

  r = fw::run_factorwatch(dir.path(), "model delete broken");
  EXPECT_EQ(r.status, 0) << r.err;
  EXPECT_EQ(r.out, "model broken deleted: 1 version and 0 windows, with their alignments, drift and alerts; the stored "
                   "returns and portfolios are kept\n");
  EXPECT_EQ(fw::run_factorwatch(dir.path(), "refresh").status, 0);
  r = fw::run_factorwatch(dir.path(), "model delete broken");
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("no model named 'broken'"), std::string::npos) << r.err;

  r = fw::run_factorwatch(dir.path(), "model prune a");
  EXPECT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("model a: 1 superseded version pruned with 7 windows; version 2 and its 7 windows kept"),
            std::string::npos)
      << r.out;
  r = fw::run_factorwatch(dir.path(), "model rename a b");
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("model name 'b' is taken"), std::string::npos) << r.err;
  r = fw::run_factorwatch(dir.path(), "model rename a nightly-a");
  EXPECT_EQ(r.status, 0) << r.err;
  EXPECT_EQ(r.out, "model a renamed to nightly-a (every version and window goes with it)\n");
  EXPECT_EQ(fw::run_factorwatch(dir.path(), "exposures nightly-a --format csv").status, 0);
}

}  // namespace
