// A load committing while a refresh runs (issue 13): every window the refresh writes
// after the load must be marked current only for the returns it was fitted on. The
// refresh reads the returns once per span, so the load is made to commit at exactly the
// worst moment, between that read and the writes, through the refresh's test seam
// (pipeline/src/refresh_hooks.h) rather than by racing two processes.
#include <gtest/gtest.h>

#include <SQLiteCpp/SQLiteCpp.h>

#include <cmath>

#include "factorwatch/pipeline/refresh.h"
#include "factorwatch/pipeline/served_windows.h"
#include "factorwatch/storage/date_key.h"
#include "factorwatch/storage/ingest.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/returns_span.h"
#include "factorwatch/storage/windows.h"
#include "refresh_hooks.h"
#include "simulated_model.h"
#include "storage_fixtures.h"

namespace {

using namespace factorwatch;
namespace testing = factorwatch::testing;
using factorwatch::testing::TempDir;

constexpr int kT = 160, kN = 30, kK = 2;
constexpr int kWindow = 100, kStep = 10;  // as-of indices 99, 109, ..., 159: 7 windows

engine::ReturnsPanel planted() {
  engine::ReturnsPanel p = testing::simulate_planted_model(kT, kN, kK, 23).panel;
  p.dates = testing::business_dates(kT);
  return p;
}

storage::ModelConfig config() {
  storage::ModelConfig c;
  c.fit.method = engine::Method::max_likelihood;
  c.fit.factors = kK;
  c.window = kWindow;
  c.step = kStep;
  return c;
}

storage::LoadSummary store(storage::Database& db, const engine::ReturnsPanel& panel, const std::string& label) {
  storage::IngestSource source;
  source.path = label;
  source.layout = "long";
  source.content_sha256 = label;
  return storage::store_returns(db, panel, source);
}

// One date's returns, one asset corrected: what a vendor's correction file holds.
engine::ReturnsPanel correction(const engine::ReturnsPanel& p, int date, int asset) {
  engine::ReturnsPanel c;
  c.dates = {p.dates[static_cast<std::size_t>(date)]};
  c.assets = {p.assets[static_cast<std::size_t>(asset)]};
  c.values.resize(1, 1);
  c.values(0, 0) = p.values(date, asset) + 0.05;
  return c;
}

// Clears the seam even when an assertion fails.
struct HookGuard {
  ~HookGuard() { pipeline::detail::refresh_hooks() = {}; }
};

// The reproduction: the load commits after the refresh read the returns and before it
// wrote any window. Before the fix all 7 windows were stored current on the old returns,
// and a second refresh said "every window is current".
TEST(RefreshConsistency, ALoadCommittingDuringARefreshLeavesItsWindowsStale) {
  TempDir dir;
  const engine::ReturnsPanel p = planted();
  storage::Database db(dir.database());
  store(db, p, "first");
  storage::set_model(db, "m", config());
  const long model = storage::find_model(db, "m")->id;

  HookGuard guard;
  int loads = 0;
  pipeline::detail::refresh_hooks().after_read = [&] {
    if (loads++ > 0) return;
    storage::Database other(dir.database());  // another process's connection
    // Date 80 lies inside every window (the first holds dates 0..99, the last 60..159).
    const storage::LoadSummary s = store(other, correction(p, 80, 3), "fix");
    EXPECT_EQ(s.values_corrected, 1u);
    EXPECT_EQ(s.windows_marked_stale, 0u);  // none stored yet: the load cannot mark them
  };
  const pipeline::RefreshSummary first = pipeline::refresh_model(db, "m");
  pipeline::detail::refresh_hooks().after_read = nullptr;
  EXPECT_EQ(loads, 1);
  EXPECT_EQ(first.fitted, 7u);
  EXPECT_EQ(first.changed_during, 7u);
  EXPECT_NE(first.note.find("stored stale"), std::string::npos) << first.note;
  EXPECT_EQ(storage::count_windows(db, model).stale, 7u);

  // The next refresh refits them on the corrected returns, and then all is current.
  const pipeline::RefreshSummary second = pipeline::refresh_model(db, "m");
  EXPECT_EQ(second.fitted, 7u);
  EXPECT_EQ(second.refitted_stale, 7u);
  EXPECT_EQ(second.changed_during, 0u);
  EXPECT_EQ(storage::count_windows(db, model).stale, 0u);
  EXPECT_EQ(pipeline::refresh_model(db, "m").note, "every window is current");

  // And they equal a refresh of a database that had the correction from the start.
  TempDir clean_dir;
  storage::Database clean(clean_dir.database());
  store(clean, p, "first");
  store(clean, correction(p, 80, 3), "fix");
  storage::set_model(clean, "m", config());
  pipeline::refresh_model(clean, "m");
  const long clean_model = storage::find_model(clean, "m")->id;
  for (int end = kWindow - 1; end < kT; end += kStep) {
    const engine::Date as_of = p.dates[static_cast<std::size_t>(end)];
    const auto a = storage::read_window(db, model, as_of, false);
    const auto b = storage::read_window(clean, clean_model, as_of, false);
    ASSERT_TRUE(a && b) << as_of;
    EXPECT_EQ(a->input_hash, b->input_hash) << as_of;
  }
}

// A load that changes returns outside a window's dates leaves it current: the check is
// per window, not "any load during the refresh".
TEST(RefreshConsistency, ALoadOutsideAWindowsDatesLeavesItCurrent) {
  TempDir dir;
  const engine::ReturnsPanel p = planted();
  storage::Database db(dir.database());
  store(db, p, "first");
  storage::set_model(db, "m", config());
  HookGuard guard;
  int loads = 0;
  pipeline::detail::refresh_hooks().after_read = [&] {
    if (loads++ > 0) return;
    storage::Database other(dir.database());
    store(other, correction(p, 155, 3), "fix");  // only in the windows ending 159 (dates 60..159)
  };
  const pipeline::RefreshSummary s = pipeline::refresh_model(db, "m");
  EXPECT_EQ(s.fitted, 7u);
  EXPECT_EQ(s.changed_during, 1u);  // the window as of date 159 only
  const auto model = storage::find_model(db, "m");
  for (const storage::WindowSummary& w : storage::list_windows(db, model->id))
    EXPECT_EQ(w.stale, w.as_of == p.dates[159]) << w.as_of;
}

// A load of an earlier date the refresh's plan did not know (a late file) shifts the
// stored dates under the grid: the refresh plans again, and its windows equal a refresh
// that had the date from the start (same dates, same inputs).
TEST(RefreshConsistency, ALateDateArrivingDuringARefreshIsPlannedAgain) {
  const engine::ReturnsPanel p = planted();
  engine::ReturnsPanel without = p;  // date 50 missing
  without.dates.erase(without.dates.begin() + 50);
  without.values.resize(kT - 1, kN);
  without.values << p.values.topRows(50), p.values.bottomRows(kT - 51);
  engine::ReturnsPanel late;
  late.dates = {p.dates[50]};
  late.assets = p.assets;
  late.values = p.values.middleRows(50, 1);

  TempDir dir;
  storage::Database db(dir.database());
  store(db, without, "without");
  storage::set_model(db, "m", config());
  HookGuard guard;
  int loads = 0;
  pipeline::detail::refresh_hooks().before_read = [&] {  // planned without the date, not read yet
    if (loads++ > 0) return;
    storage::Database other(dir.database());
    store(other, late, "late");
  };
  const pipeline::RefreshSummary s = pipeline::refresh_model(db, "m");
  EXPECT_EQ(loads, 2);  // planned, read, planned again, read again
  EXPECT_EQ(s.fitted, 7u);
  EXPECT_EQ(s.changed_during, 0u);

  TempDir clean_dir;
  storage::Database clean(clean_dir.database());
  store(clean, p, "all");
  storage::set_model(clean, "m", config());
  pipeline::refresh_model(clean, "m");
  const auto mine = storage::list_windows(db, storage::find_model(db, "m")->id);
  const auto theirs = storage::list_windows(clean, storage::find_model(clean, "m")->id);
  ASSERT_EQ(mine.size(), theirs.size());
  for (std::size_t i = 0; i < mine.size(); ++i) {
    EXPECT_EQ(mine[i].as_of, theirs[i].as_of);
    EXPECT_EQ(mine[i].first_date, theirs[i].first_date);
    EXPECT_FALSE(mine[i].stale);
    const auto a = pipeline::read_served_window(db, storage::find_model(db, "m")->id, mine[i].as_of);
    const auto b = pipeline::read_served_window(clean, storage::find_model(clean, "m")->id, theirs[i].as_of);
    EXPECT_EQ(a->input_hash, b->input_hash) << mine[i].as_of;
  }
}

// save_window itself, below the refresh: the digest of the rows read is compared with the
// rows stored at the time of the write.
TEST(RefreshConsistency, SaveWindowComparesTheRowsReadWithTheRowsStored) {
  TempDir dir;
  const engine::ReturnsPanel p = planted();
  storage::Database db(dir.database());
  store(db, p, "first");
  storage::set_model(db, "m", config());
  pipeline::refresh_model(db, "m");
  const long model = storage::find_model(db, "m")->id;
  storage::WindowRecord w = *storage::read_window(db, model, p.dates[99], false);
  const std::uint64_t read = storage::stored_rows_digest(db, w.first_date, w.as_of);
  EXPECT_TRUE(storage::save_window(db, model, w, read));
  EXPECT_FALSE(pipeline::read_served_window(db, model, w.as_of)->stale);
  store(db, correction(p, 10, 0), "fix");
  EXPECT_FALSE(storage::save_window(db, model, w, read));
  EXPECT_TRUE(pipeline::read_served_window(db, model, w.as_of)->stale);
}

}  // namespace
