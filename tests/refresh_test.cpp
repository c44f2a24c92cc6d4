// The rolling refresh: the window grid, windows fitted through the database equal to the
// engine run directly on the file, resumption after an interruption, model versions and
// universes.
#include <gtest/gtest.h>

#include <SQLiteCpp/SQLiteCpp.h>

#include <cmath>
#include <cstring>
#include <Spectra/Util/Version.h>

#include "factorwatch/engine/build_info.h"
#include "factorwatch/pipeline/refresh.h"
#include "factorwatch/pipeline/served_windows.h"
#include "factorwatch/storage/content_hash.h"
#include "factorwatch/storage/damaged_data.h"
#include "factorwatch/storage/ingest.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/returns_csv.h"
#include "factorwatch/storage/windows.h"
#include "simulated_model.h"
#include "storage_fixtures.h"
#include "stored_returns.h"

namespace {

using namespace factorwatch;
namespace testing = factorwatch::testing;
using factorwatch::testing::TempDir;

constexpr int kT = 160, kN = 40, kK = 3;

engine::ReturnsPanel planted() {
  engine::ReturnsPanel p = testing::simulate_planted_model(kT, kN, kK, 11).panel;
  p.dates = testing::business_dates(kT);
  // A late listing and a scattered gap, as real files have.
  for (int t = 0; t < 70; ++t) p.values(t, 5) = std::numeric_limits<double>::quiet_NaN();
  p.values(100, 7) = std::numeric_limits<double>::quiet_NaN();
  return p;
}

void load(storage::Database& db, const std::string& path) { testing::load_returns(db, path); }

storage::ModelConfig ml_config(int window, int step) {
  storage::ModelConfig c;
  c.fit.method = engine::Method::max_likelihood;
  c.fit.factors = kK;
  c.window = window;
  c.step = step;
  return c;
}

// Windows as stored, blob bytes included, to compare two databases.
std::vector<std::string> window_rows(storage::Database& db) {
  std::vector<std::string> rows;
  SQLite::Statement q(db.sql(), "SELECT as_of, input_hash, assets, loadings, specific_variance, factor_covariance, "
                                "eigenvalues FROM windows ORDER BY as_of");
  while (q.executeStep()) {
    std::string row = q.getColumn(0).getString() + "|" + q.getColumn(1).getString() + "|";
    for (int c = 2; c < 7; ++c)
      row.append(static_cast<const char*>(q.getColumn(c).getBlob()), static_cast<std::size_t>(q.getColumn(c).getBytes()));
    rows.push_back(row);
  }
  return rows;
}

// Alignments and drift as stored, bytes included (the aligned_at time left out).
std::vector<std::string> alignment_rows(storage::Database& db) {
  std::vector<std::string> rows;
  SQLite::Statement q(db.sql(), "SELECT w.as_of, a.status, a.reference_as_of, a.alignment, a.factor_fit, "
                                "quote(a.residual), d.against, d.congruence, d.movers FROM windows w "
                                "JOIN window_alignments a ON a.window_id = w.id "
                                "LEFT JOIN window_drift d ON d.window_id = w.id ORDER BY w.as_of, d.against");
  while (q.executeStep()) {
    std::string row;
    for (int c = 0; c < 9; ++c) {
      const SQLite::Column column = q.getColumn(c);
      row.append(static_cast<const char*>(column.getBlob()), static_cast<std::size_t>(column.getBytes()));
      row += "|";
    }
    rows.push_back(row);
  }
  return rows;
}

TEST(Refresh, GridIsAnchoredOnTheFirstDateAndASecondRunDoesNothing) {
  TempDir dir;
  const engine::ReturnsPanel p = planted();
  testing::write_long_csv(dir.file("r.csv"), p);
  storage::Database db(dir.database());
  load(db, dir.file("r.csv"));
  storage::set_model(db, "m", ml_config(100, 7));
  const auto model = storage::find_model(db, "m");
  const auto pending = pipeline::pending_windows(db, *model);
  // As-of indices 99, 106, ..., 155: (160 - 100) / 7 + 1 = 9 windows.
  ASSERT_EQ(pending.size(), 9u);
  EXPECT_EQ(pending.front(), p.dates[99]);
  EXPECT_EQ(pending.back(), p.dates[155]);
  const auto first = pipeline::refresh_model(db, "m");
  EXPECT_EQ(first.fitted, 9u);
  EXPECT_EQ(first.unusable, 0u);
  const auto second = pipeline::refresh_model(db, "m");
  EXPECT_EQ(second.fitted, 0u);
  EXPECT_EQ(second.already_current, 9u);
  // first_as_of skips the grid points before it.
  storage::ModelConfig later = ml_config(100, 7);
  later.first_as_of = p.dates[140];
  storage::set_model(db, "late", later);
  EXPECT_EQ(pipeline::pending_windows(db, *storage::find_model(db, "late")).size(), 3u);  // 141, 148, 155
}

// Older history loaded after a model's first refresh (a vendor's back file, sent late)
// adds dates before the grid. The grid stays anchored at the model's earliest window: no
// window moves, none is fitted before the first, and the pinned window (by default the
// first), every alignment and every drift row stay byte for byte as they were. On the
// old rule (grid counted from the first stored date) step 7 moved every as-of date and
// step 1 fitted 40 earlier windows, changing the first window and all drift against it.
TEST(Refresh, OlderHistoryLoadedLaterMovesNeitherTheGridNorThePinnedWindow) {
  for (int step : {1, 7}) {
    SCOPED_TRACE("step " + std::to_string(step));
    TempDir dir;
    const engine::ReturnsPanel p = planted();
    const auto slice = [&](int from, int to) {
      engine::ReturnsPanel part;
      part.assets = p.assets;
      part.dates.assign(p.dates.begin() + from, p.dates.begin() + to);
      part.values = p.values.middleRows(from, to - from);
      return part;
    };
    testing::write_long_csv(dir.file("recent.csv"), slice(40, kT));
    testing::write_long_csv(dir.file("older.csv"), slice(0, 40));
    storage::Database db(dir.database());
    load(db, dir.file("recent.csv"));
    storage::set_model(db, "m", ml_config(60, step));
    const auto first = pipeline::refresh_model(db, "m");
    ASSERT_GT(first.fitted, 0u);
    EXPECT_EQ(first.first_as_of, p.dates[40 + 59]);
    const auto windows_before = window_rows(db);
    const auto alignments_before = alignment_rows(db);

    load(db, dir.file("older.csv"));
    const auto model = storage::find_model(db, "m");
    EXPECT_TRUE(pipeline::pending_windows(db, *model).empty());
    const auto second = pipeline::refresh_model(db, "m");
    EXPECT_EQ(second.fitted, 0u);
    EXPECT_EQ(second.already_current, first.fitted);
    EXPECT_EQ(window_rows(db), windows_before);
    EXPECT_EQ(alignment_rows(db), alignments_before);
    EXPECT_EQ(storage::window_states(db, model->id).front().as_of, p.dates[99]);
  }
}

// The equality the issue asks for: each stored window equals engine::fit on the same
// dates read straight from the file, warm-started the same way (the first cold, each
// later one from its predecessor). Loadings compare bit for bit: the database path feeds
// the engine the same numbers in the same order.
TEST(Refresh, WindowThroughTheDatabaseEqualsTheEngineOnTheFile) {
  TempDir dir;
  testing::write_long_csv(dir.file("r.csv"), planted());
  storage::Database db(dir.database());
  load(db, dir.file("r.csv"));
  const storage::ModelConfig config = ml_config(120, 10);
  storage::set_model(db, "m", config);
  pipeline::refresh_model(db, "m");
  const auto model = storage::find_model(db, "m");

  const engine::ReturnsPanel file = storage::read_returns_csv(dir.file("r.csv"));
  std::optional<engine::FactorFit> previous;
  int compared = 0;
  for (int end = 119; end < kT; end += 10) {
    engine::ReturnsPanel w;
    w.assets = file.assets;
    w.dates.assign(file.dates.begin() + end - 119, file.dates.begin() + end + 1);
    w.values = file.values.middleRows(end - 119, 120);
    engine::FitOptions options = config.fit_options();
    if (previous) options.warm_start = engine::WarmStart{previous->assets, previous->loadings, previous->specific_variance};
    const engine::FactorFit direct = engine::fit(w, options);
    // As fitted: the served form is also rotated and aligned (tests/alignment_refresh_test.cpp).
    const auto stored = storage::read_window(db, model->id, file.dates[static_cast<std::size_t>(end)], false);
    ASSERT_TRUE(stored) << file.dates[static_cast<std::size_t>(end)];
    const engine::FactorFit& s = stored->fit;
    EXPECT_EQ(s.assets, direct.assets);
    EXPECT_EQ(s.excluded.size(), direct.excluded.size());
    ASSERT_EQ(s.loadings.rows(), direct.loadings.rows());
    EXPECT_EQ(s.loadings, direct.loadings);
    EXPECT_EQ(s.specific_variance, direct.specific_variance);
    EXPECT_EQ(s.eigenvalues, direct.eigenvalues);
    EXPECT_EQ(s.iterations, direct.iterations);
    EXPECT_EQ(s.log_likelihood, direct.log_likelihood);
    EXPECT_EQ(s.warm_started, direct.warm_started);
    EXPECT_EQ(stored->first_date, w.dates.front());
    previous = direct;
    ++compared;
  }
  EXPECT_EQ(compared, 5);
}

// An interrupted refresh (here: the later windows removed, as if the process had died
// after writing the first ones) resumes from the stored windows and ends with the same
// bytes as an uninterrupted run. The crash-safety test does the same with kill -9.
TEST(Refresh, ResumedRefreshEqualsAnUninterruptedOne) {
  TempDir a, b;
  const engine::ReturnsPanel p = planted();
  testing::write_long_csv(a.file("r.csv"), p);
  storage::Database db_a(a.database()), db_b(b.database());
  load(db_a, a.file("r.csv"));
  load(db_b, a.file("r.csv"));
  storage::set_model(db_a, "m", ml_config(100, 3));
  storage::set_model(db_b, "m", ml_config(100, 3));
  pipeline::refresh_model(db_a, "m");
  pipeline::refresh_model(db_b, "m");
  // Rows are written in as-of order; a window's alignment and drift refer to it.
  db_b.sql().exec("DELETE FROM window_alignments WHERE window_id > 6; DELETE FROM window_drift WHERE window_id > 6; "
                  "DELETE FROM drift_alerts WHERE window_id > 6; DELETE FROM windows WHERE rowid > 6");
  ASSERT_LT(window_rows(db_b).size(), window_rows(db_a).size());
  const auto resumed = pipeline::refresh_model(db_b, "m");
  EXPECT_GT(resumed.fitted, 0u);
  EXPECT_EQ(window_rows(db_b), window_rows(db_a));
  EXPECT_EQ(alignment_rows(db_b), alignment_rows(db_a));
}

TEST(Refresh, ChangedConfigurationIsANewVersionAndOldWindowsStay) {
  TempDir dir;
  testing::write_long_csv(dir.file("r.csv"), planted());
  storage::Database db(dir.database());
  load(db, dir.file("r.csv"));
  const auto v1 = storage::set_model(db, "m", ml_config(100, 20));
  EXPECT_TRUE(v1.created);
  pipeline::refresh_model(db, "m");
  const auto same = storage::set_model(db, "m", ml_config(100, 20));
  EXPECT_FALSE(same.new_version);
  EXPECT_EQ(same.model.version, 1);
  storage::ModelConfig changed = ml_config(100, 20);
  changed.fit.factors = 2;
  const auto v2 = storage::set_model(db, "m", changed);
  EXPECT_TRUE(v2.new_version);
  EXPECT_EQ(v2.model.version, 2);
  EXPECT_EQ(storage::list_windows(db, v1.model.id).size(), 4u);  // as-of 99, 119, 139, 159: kept, 3 factors
  EXPECT_EQ(pipeline::read_served_window(db, v1.model.id, std::nullopt)->fit.factors, 3);
  EXPECT_EQ(storage::list_windows(db, v2.model.id).size(), 0u);
  pipeline::refresh_model(db, "m");
  EXPECT_EQ(pipeline::read_served_window(db, v2.model.id, std::nullopt)->fit.factors, 2);
  EXPECT_NE(pipeline::read_served_window(db, v2.model.id, std::nullopt)->configuration_hash,
            pipeline::read_served_window(db, v1.model.id, std::nullopt)->configuration_hash);
}

// The ML stopping rule's tolerance is a model option. Left at its default it does not enter
// the configuration's fingerprint, so models defined before the option keep their version
// and windows; set, it starts a new version whose windows meet it and record the evidence.
TEST(Refresh, ToleranceIsAModelOptionAndStoredWindowsCarryTheCriterion) {
  TempDir dir;
  testing::write_long_csv(dir.file("r.csv"), planted());
  storage::Database db(dir.database());
  load(db, dir.file("r.csv"));
  const auto v1 = storage::set_model(db, "m", ml_config(100, 20));
  // A configuration stored before the option existed has no "tolerance" member.
  nlohmann::json old_form = v1.model.config.to_json();
  old_form.erase("tolerance");
  const storage::ModelConfig old_config = storage::ModelConfig::from_json(old_form);
  EXPECT_EQ(old_config.fit.tolerance, engine::FitOptions{}.tolerance);
  EXPECT_EQ(old_config.hash(), v1.model.configuration_hash);
  pipeline::refresh_model(db, "m");
  for (const auto& w : storage::list_windows(db, v1.model.id)) {
    EXPECT_TRUE(std::isfinite(w.largest_scaled_gradient)) << w.as_of;
    EXPECT_LE(w.largest_scaled_gradient, 1e-8) << w.as_of;
  }
  const auto first = pipeline::read_served_window(db, v1.model.id, std::nullopt);
  EXPECT_EQ(first->fit.tolerance, 1e-8);
  EXPECT_EQ(first->fit.iterations, first->fit.em_passes + first->fit.newton_steps + first->fit.profile_steps);

  storage::ModelConfig tighter = ml_config(100, 20);
  tighter.fit.tolerance = 1e-12;
  const auto v2 = storage::set_model(db, "m", tighter);
  EXPECT_TRUE(v2.new_version);
  pipeline::refresh_model(db, "m");
  const auto windows = storage::list_windows(db, v2.model.id);
  ASSERT_EQ(windows.size(), 4u);
  for (const auto& w : windows) {
    EXPECT_EQ(w.termination, "converged");
    EXPECT_LE(w.largest_scaled_gradient, 1e-12) << w.as_of;
  }
  EXPECT_EQ(pipeline::read_served_window(db, v2.model.id, std::nullopt)->fit.tolerance, 1e-12);

  tighter.fit.tolerance = 0.5;
  const auto failure = tighter.FirstFailure();
  ASSERT_TRUE(failure);
  EXPECT_EQ(failure->field, "tolerance");
}

// A window stored before the gradient rule has no criterion: it reads back as NaN (shown
// as missing), not as a made-up value.
TEST(Refresh, WindowFromBeforeTheGradientRuleReadsWithoutACriterion) {
  TempDir dir;
  testing::write_long_csv(dir.file("r.csv"), planted());
  storage::Database db(dir.database());
  load(db, dir.file("r.csv"));
  const auto v1 = storage::set_model(db, "m", ml_config(100, 20));
  pipeline::refresh_model(db, "m");
  db.sql().exec("UPDATE windows SET statistics = json_remove(statistics, '$.largest_scaled_gradient', "
                "'$.tolerance', '$.em_passes', '$.newton_steps')");
  const auto w = pipeline::read_served_window(db, v1.model.id, std::nullopt);
  ASSERT_TRUE(w);
  EXPECT_TRUE(std::isnan(w->fit.largest_scaled_gradient));
  EXPECT_TRUE(std::isnan(w->fit.tolerance));
  for (const auto& s : storage::list_windows(db, v1.model.id)) EXPECT_TRUE(std::isnan(s.largest_scaled_gradient));
}

// Every stored window records what built its numbers: this build's program version, the
// Eigen and Spectra versions (the very headers this test compiles against) and flags. A
// window from before schema 8 (NULL) reads as not known; a damaged record is reported as
// damaged data naming the window, not served.
TEST(Refresh, EveryWindowRecordsTheBuildThatFittedIt) {
  TempDir dir;
  testing::write_long_csv(dir.file("r.csv"), planted());
  storage::Database db(dir.database());
  load(db, dir.file("r.csv"));
  const auto v1 = storage::set_model(db, "m", ml_config(100, 20));
  pipeline::refresh_model(db, "m");
  const std::string eigen = std::to_string(EIGEN_WORLD_VERSION) + "." + std::to_string(EIGEN_MAJOR_VERSION) + "." +
                            std::to_string(EIGEN_MINOR_VERSION);
  const std::string spectra = std::to_string(SPECTRA_MAJOR_VERSION) + "." + std::to_string(SPECTRA_MINOR_VERSION) +
                              "." + std::to_string(SPECTRA_PATCH_VERSION);
  const auto summaries = storage::list_windows(db, v1.model.id);
  ASSERT_EQ(summaries.size(), 4u);  // as-of indices 99, 119, 139, 159
  for (const auto& s : summaries) {
    const auto w = storage::read_window(db, v1.model.id, s.as_of, false);
    ASSERT_TRUE(w);
    EXPECT_EQ(w->provenance.program_version, engine::build_info().program_version);
    EXPECT_FALSE(w->provenance.program_version.empty());
    EXPECT_EQ(w->provenance.eigen_version, eigen);
    EXPECT_EQ(w->provenance.spectra_version, spectra);
    EXPECT_EQ(w->provenance.build_flags, engine::build_info().build_flags);
#ifdef __clang__
    EXPECT_EQ(w->provenance.build_flags.rfind("Clang ", 0), 0u) << w->provenance.build_flags;
#else
    EXPECT_EQ(w->provenance.build_flags.rfind("GNU ", 0), 0u) << w->provenance.build_flags;
#endif
  }
  db.sql().exec("UPDATE windows SET provenance = NULL WHERE as_of = (SELECT min(as_of) FROM windows)");
  const auto old = storage::read_window(db, v1.model.id, summaries.front().as_of, false);
  ASSERT_TRUE(old);
  EXPECT_TRUE(old->provenance.program_version.empty());
  EXPECT_TRUE(old->provenance.build_flags.empty());
  db.sql().exec("UPDATE windows SET provenance = '{\"program\": 1' WHERE as_of = (SELECT max(as_of) FROM windows)");
  try {
    storage::read_window(db, v1.model.id, summaries.back().as_of, false);
    ADD_FAILURE() << "a damaged provenance was read";
  } catch (const storage::DamagedData& e) {
    EXPECT_NE(std::string(e.what()).find("provenance"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find(summaries.back().as_of.iso()), std::string::npos) << e.what();
  }
}

// A backfill of wide windows without gaps (fewer dates than assets, a date apart) carries
// the window products from each window to the next (window_products.h) and warm-starts
// each fit; every stored window must still hold the figures of a cold fit of its dates
// with neither: PCA to round-off, ML within the accuracy its tests hold (1e-6 in a
// uniqueness, tests/ml_default_accuracy_test.cpp).
TEST(Refresh, BackfillWithCarriedProductsEqualsColdFits) {
  TempDir dir;
  engine::ReturnsPanel p = testing::simulate_planted_model(90, 250, kK, 17).panel;
  p.dates = testing::business_dates(90);
  testing::write_long_csv(dir.file("wide.csv"), p);
  storage::Database db(dir.database());
  load(db, dir.file("wide.csv"));
  const engine::ReturnsPanel file = storage::read_returns_csv(dir.file("wide.csv"));
  for (const engine::Method method : {engine::Method::pca, engine::Method::max_likelihood}) {
    storage::ModelConfig config = ml_config(60, 1);
    config.fit.method = method;
    const std::string name = engine::to_string(method);
    storage::set_model(db, name, config);
    EXPECT_EQ(pipeline::refresh_model(db, name).fitted, 31u);
    const auto model = storage::find_model(db, name);
    int carried = 0;
    for (int end = 59; end < 90; end += 5) {
      engine::ReturnsPanel w;
      w.assets = file.assets;
      w.dates.assign(file.dates.begin() + end - 59, file.dates.begin() + end + 1);
      w.values = file.values.middleRows(end - 59, 60);
      const engine::FactorFit cold = engine::fit(w, config.fit_options());
      const auto stored = storage::read_window(db, model->id, file.dates[static_cast<std::size_t>(end)], false);
      ASSERT_TRUE(stored && cold.converged) << name << " " << end;
      const engine::FactorFit& s = stored->fit;
      ASSERT_EQ(s.assets, cold.assets);
      if (s.solver_path.find("carried window products") != std::string::npos) ++carried;
      const double tolerance = method == engine::Method::pca ? 1e-10 : 1e-6;
      EXPECT_LT((s.uniqueness - cold.uniqueness).cwiseAbs().maxCoeff(), tolerance) << name << " " << end;
      EXPECT_LT(((s.eigenvalues - cold.eigenvalues).array() / cold.eigenvalues.array()).abs().maxCoeff(), 1e-10);
    }
    EXPECT_EQ(carried, 7) << name;
  }
}

TEST(Refresh, UniverseListRestrictsTheAssets) {
  TempDir dir;
  const engine::ReturnsPanel p = planted();
  testing::write_long_csv(dir.file("r.csv"), p);
  storage::Database db(dir.database());
  load(db, dir.file("r.csv"));
  storage::ModelConfig config = ml_config(100, 60);
  config.fit.factors = 2;
  config.universe.assign(p.assets.begin() + 10, p.assets.begin() + 30);
  config.universe.push_back("ZQ-not-yet-listed");
  storage::set_model(db, "part", config);
  pipeline::refresh_model(db, "part");
  const auto w = pipeline::read_served_window(db, storage::find_model(db, "part")->id, std::nullopt);
  ASSERT_TRUE(w);
  EXPECT_EQ(w->fit.assets, std::vector<std::string>(p.assets.begin() + 10, p.assets.begin() + 30));
}

TEST(Refresh, TooFewDatesIsANoteNotAnError) {
  TempDir dir;
  testing::write_long_csv(dir.file("r.csv"), planted());
  storage::Database db(dir.database());
  load(db, dir.file("r.csv"));
  storage::set_model(db, "long", ml_config(500, 1));
  const auto s = pipeline::refresh_model(db, "long");
  EXPECT_EQ(s.fitted, 0u);
  EXPECT_NE(s.note.find("fewer than the window"), std::string::npos) << s.note;
  EXPECT_THROW(pipeline::refresh_model(db, "missing"), std::invalid_argument);
}

}  // namespace
