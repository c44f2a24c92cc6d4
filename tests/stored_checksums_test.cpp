// Damaged stored data (issue 13): a checksum on every returns row and every matrix blob,
// checked on every read, so that damage gives a clear error naming the row instead of a
// crash or a wrong number; `factorwatch verify` over a whole database; the schema 7
// migration that adds the checksums to an existing database.
#include <gtest/gtest.h>

#include <SQLiteCpp/SQLiteCpp.h>

#include <nlohmann/json.hpp>

#include "blob_codec.h"
#include "daemon_fixture.h"
#include "factorwatch/pipeline/refresh.h"
#include "factorwatch/pipeline/served_windows.h"
#include "factorwatch/storage/damaged_data.h"
#include "factorwatch/storage/date_key.h"
#include "factorwatch/storage/ingest.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/verify.h"
#include "factorwatch/storage/windows.h"
#include "migrations.h"
#include "returns_rows.h"
#include "simulated_model.h"
#include "storage_fixtures.h"
#include "stored_returns.h"

namespace {

using namespace factorwatch;
namespace fw = factorwatch::testing;
using fw::TempDir;
namespace detail = storage::detail;

constexpr int kT = 160, kN = 30, kK = 2;
constexpr int kWindow = 100, kStep = 30;  // windows as of dates 99, 129 and 159

engine::ReturnsPanel planted() {
  engine::ReturnsPanel p = fw::simulate_planted_model(kT, kN, kK, 31).panel;
  p.dates = fw::business_dates(kT);
  return p;
}

std::string model_options() {
  return "--method ml --factors " + std::to_string(kK) + " --window " + std::to_string(kWindow) + " --step " +
         std::to_string(kStep);
}

bool contains(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

// Flips one bit of a stored blob, as a bad disk sector or a stray write would.
void flip_bit(const std::string& database, const std::string& table, const std::string& column,
              const std::string& where, std::size_t byte, int bit) {
  SQLite::Database sql(database, SQLite::OPEN_READWRITE);
  SQLite::Statement read(sql, "SELECT " + column + " FROM " + table + " WHERE " + where);
  ASSERT_TRUE(read.executeStep());
  const SQLite::Column c = read.getColumn(0);
  std::string bytes(static_cast<const char*>(c.getBlob()), static_cast<std::size_t>(c.getBytes()));
  read.reset();
  ASSERT_LT(byte, bytes.size());
  bytes[byte] = static_cast<char>(bytes[byte] ^ (1 << bit));
  SQLite::Statement write(sql, "UPDATE " + table + " SET " + column + " = ? WHERE " + where);
  write.bind(1, bytes.data(), static_cast<int>(bytes.size()));
  ASSERT_EQ(write.exec(), 1);
}

// Every single-bit change of a sealed blob is caught (a change confined to one 8-byte
// word always changes the Fingerprint: each mixing step is a bijection).
TEST(StoredChecksums, EveryFlippedBitOfAMatrixBlobIsCaught) {
  Eigen::MatrixXd m(4, 3);
  for (int i = 0; i < m.size(); ++i) m.data()[i] = 0.01 * (i + 1);
  const std::string good = detail::encode_doubles(m);
  EXPECT_EQ(detail::decode_matrix(good.data(), good.size(), "m"), m);
  for (std::size_t byte = 0; byte < good.size(); ++byte)
    for (int bit = 0; bit < 8; ++bit) {
      std::string bad = good;
      bad[byte] = static_cast<char>(bad[byte] ^ (1 << bit));
      EXPECT_THROW(detail::decode_matrix(bad.data(), bad.size(), "m"), storage::DamagedData) << byte << ":" << bit;
    }
  for (std::size_t cut = 0; cut < good.size(); ++cut)
    EXPECT_THROW(detail::decode_matrix(good.data(), cut, "m"), storage::DamagedData) << cut;
  const std::string ids = detail::encode_int32s({3, 5, 9});
  EXPECT_EQ(detail::decode_int32s(ids.data(), ids.size(), "assets"), (std::vector<std::int32_t>{3, 5, 9}));
  std::string bad_ids = ids;
  bad_ids[0] ^= 1;
  EXPECT_THROW(detail::decode_int32s(bad_ids.data(), bad_ids.size(), "assets"), storage::DamagedData);
}

// Bounds before checksums: a returns row whose checksum matches its bytes (a bug, or
// damage written with a fresh checksum) but whose ids would index out of bounds is
// still refused, naming the date.
TEST(StoredChecksums, ReturnsRowIdsAreBoundsCheckedEvenWithAGoodChecksum) {
  TempDir dir;
  storage::Database db(dir.database());
  for (const std::vector<std::int32_t>& ids : {std::vector<std::int32_t>{-1}, {0}, {5, 5}, {7, 3}}) {
    std::string id_bytes, value_bytes;
    detail::append_int32s(id_bytes, ids.data(), ids.size());
    const std::vector<double> values(ids.size(), 0.01);
    detail::append_float64s(value_bytes, values.data(), values.size());
    SQLite::Statement q(db.sql(), "INSERT OR REPLACE INTO returns (date, asset_ids, returns, checksum) VALUES (20240102, ?, ?, ?)");
    q.bind(1, id_bytes.data(), static_cast<int>(id_bytes.size()));
    q.bind(2, value_bytes.data(), static_cast<int>(value_bytes.size()));
    q.bind(3, detail::row_checksum(20240102, id_bytes.data(), id_bytes.size(), value_bytes.data(), value_bytes.size()));
    q.exec();
    detail::CrossSectionReader reader(db.sql());
    detail::CrossSection row;
    try {
      reader.read(20240102, row);
      ADD_FAILURE() << "read a row with ids " << ids.front();
    } catch (const storage::DamagedData& e) {
      EXPECT_TRUE(contains(e.what(), "2024-01-02")) << e.what();
      EXPECT_TRUE(contains(e.what(), "asset id")) << e.what();
    }
  }
}

// The real command on a real data directory: load, define, (refresh).
class DamagedDatabase : public ::testing::Test {
 protected:
  void SetUp() override {
    panel_ = planted();
    fw::write_long_csv(dir_.file("returns.csv"), panel_);
    ASSERT_EQ(run("load '" + dir_.file("returns.csv") + "'").status, 0);
    ASSERT_EQ(run("model set m " + model_options()).status, 0);
  }
  fw::CommandResult run(const std::string& arguments) { return fw::run_factorwatch(dir_.path(), arguments); }
  std::string as_of(int index) const { return panel_.dates[static_cast<std::size_t>(index)].iso(); }
  std::string key(int index) const { return std::to_string(panel_.dates[static_cast<std::size_t>(index)].key()); }

  TempDir dir_;
  engine::ReturnsPanel panel_;
};

// The reproduction: one damaged returns row made `refresh` segfault (exit 139) in
// ReturnsSpan. The damage here is the first asset id of date 80 (inside every window)
// turned into -1, which the old reader used as an array index.
TEST_F(DamagedDatabase, RefreshOnADamagedReturnsRowFailsClearlyInsteadOfCrashing) {
  for (int bit = 0; bit < 8; ++bit) flip_bit(dir_.database(), "returns", "asset_ids", "date = " + key(80), 3, bit);
  const fw::CommandResult r = run("refresh m");
  EXPECT_EQ(r.status, 1) << "status -1 is a signal (the old segfault); " << r.err;
  EXPECT_TRUE(contains(r.err, "damaged returns row of " + as_of(80))) << r.err;
  EXPECT_TRUE(contains(r.err, "checksum")) << r.err;
  const fw::CommandResult v = run("verify");
  EXPECT_EQ(v.status, 1);
  EXPECT_TRUE(contains(v.out, "returns, date " + as_of(80) + ": damaged returns row")) << v.out;
}

// The reproduction: one flipped bit in a stored loadings blob changed an exposure from
// 0.01212 to 0.00022 with exit 0. Now every read of that window fails naming it, the
// other windows still read, and verify lists it.
TEST_F(DamagedDatabase, AFlippedBitInStoredLoadingsIsReportedNotServed) {
  ASSERT_EQ(run("refresh m").status, 0);
  const fw::CommandResult clean = run("verify");
  EXPECT_EQ(clean.status, 0) << clean.out << clean.err;
  EXPECT_TRUE(contains(clean.out, "160 returns rows, 3 windows")) << clean.out;
  EXPECT_TRUE(contains(clean.out, "no problems")) << clean.out;

  // Byte 8 + 8 * 5 + 6 holds a high mantissa bit of the sixth loading: a plausible wrong number.
  flip_bit(dir_.database(), "windows", "loadings", "as_of = " + key(129), 8 + 8 * 5 + 6, 3);
  const fw::CommandResult damaged = run("exposures m --as-of " + as_of(129) + " --format csv");
  EXPECT_EQ(damaged.status, 1) << damaged.out;
  EXPECT_TRUE(damaged.out.empty() || !contains(damaged.out, "ZQ")) << damaged.out;
  EXPECT_TRUE(contains(damaged.err, "model 'm'")) << damaged.err;
  EXPECT_TRUE(contains(damaged.err, "window " + as_of(129))) << damaged.err;
  EXPECT_TRUE(contains(damaged.err, "'loadings'")) << damaged.err;
  EXPECT_TRUE(contains(damaged.err, "checksum")) << damaged.err;
  EXPECT_EQ(run("exposures m --as-of " + as_of(159)).status, 0);  // the others still serve

  const fw::CommandResult v = run("verify");
  EXPECT_EQ(v.status, 1);
  EXPECT_TRUE(contains(v.out, "windows, model 'm' (version 1), window " + as_of(129) +
                                  ": damaged value in column 'loadings'"))
      << v.out;
  EXPECT_TRUE(contains(v.out, "1 problem")) << v.out;
  const auto json = nlohmann::json::parse(run("verify --format json").out);
  ASSERT_EQ(json["problems"].size(), 1u);
  EXPECT_EQ(json["problems"][0]["table"], "windows");

  // Over HTTP: a problem answer naming the window, and the daemon keeps serving.
  fw::DaemonProcess daemon(dir_.path());
  ASSERT_TRUE(daemon.ready()) << daemon.log();
  const fw::HttpResult bad = fw::curl(dir_.path(), "", daemon.url("/v1/models/m/exposures?as_of=" + as_of(129)));
  EXPECT_EQ(bad.status, 500);
  EXPECT_TRUE(contains(bad.body, "stored data damaged")) << bad.body;
  EXPECT_TRUE(contains(bad.body, "window " + as_of(129))) << bad.body;
  // The database is at fault, not the daemon: no "internal error", and the way to see all.
  EXPECT_FALSE(contains(bad.body, "internal error")) << bad.body;
  EXPECT_TRUE(contains(bad.body, "factorwatch verify")) << bad.body;
  EXPECT_EQ(fw::curl(dir_.path(), "", daemon.url("/v1/models/m/exposures?as_of=" + as_of(159))).status, 200);
  EXPECT_EQ(fw::curl(dir_.path(), "", daemon.url("/v1/health")).status, 200);
  EXPECT_EQ(daemon.stop(), 0);
}

// A damaged alignment or drift row is named too.
TEST_F(DamagedDatabase, VerifyNamesDamagedAlignmentAndDriftRows) {
  ASSERT_EQ(run("refresh m").status, 0);
  flip_bit(dir_.database(), "window_alignments", "alignment",
           "window_id = (SELECT id FROM windows WHERE as_of = " + key(159) + ")", 9, 0);
  flip_bit(dir_.database(), "window_drift", "congruence",
           "window_id = (SELECT id FROM windows WHERE as_of = " + key(159) + ") AND against = 'previous'", 9, 0);
  const fw::CommandResult v = run("verify");
  EXPECT_EQ(v.status, 1);
  EXPECT_TRUE(contains(v.out, "window_alignments, model 'm' (version 1), window " + as_of(159))) << v.out;
  EXPECT_TRUE(contains(v.out, "window_drift, model 'm' (version 1), window " + as_of(159) + ", against previous"))
      << v.out;
  EXPECT_TRUE(contains(v.out, "2 problems")) << v.out;
}

// Schema 7 on an existing database: a file written by schema 6 (no checksums: built here
// by taking a current one back, the exact layout schema 6 wrote) gets a checksum on every
// returns row and blob when opened, and reads the same numbers.
TEST(StoredChecksums, MigrationFromSchema6BackFillsEveryChecksum) {
  TempDir dir;
  const engine::ReturnsPanel p = planted();
  fw::write_long_csv(dir.file("r.csv"), p);
  std::vector<storage::WindowRecord> before;
  {
    storage::Database db(dir.database());
    fw::load_returns(db, dir.file("r.csv"));
    storage::ModelConfig c;
    c.fit.method = engine::Method::max_likelihood;
    c.fit.factors = kK;
    c.window = kWindow;
    c.step = kStep;
    storage::set_model(db, "m", c);
    pipeline::refresh_model(db, "m");
    for (const auto& w : storage::list_windows(db, storage::find_model(db, "m")->id))
      before.push_back(*pipeline::read_served_window(db, storage::find_model(db, "m")->id, w.as_of));
    ASSERT_EQ(before.size(), 3u);
    SQLite::Database& sql = db.sql();
    // Back to schema 6: blobs without their 8-byte checksum, no checksum column.
    const std::vector<std::pair<std::string, std::vector<std::string>>> blobs = {
        {"windows",
         {"assets", "mean", "scale", "loadings", "specific_variance", "communality", "uniqueness", "heywood",
          "factor_covariance", "eigenvalues", "explained_share", "rotation"}},
        {"window_alignments", {"alignment", "factor_fit"}},
        {"window_drift", {"congruence", "principal_angles", "factor_variance_change", "explained_share_change"}}};
    for (const auto& [table, columns] : blobs)
      for (const std::string& c : columns)
        sql.exec("UPDATE " + table + " SET " + c + " = substr(" + c + ", 1, length(" + c + ") - 8) WHERE " + c +
                 " IS NOT NULL");
    sql.exec("DROP INDEX returns_checksums");
    sql.exec("ALTER TABLE returns DROP COLUMN checksum");
    sql.exec("ALTER TABLE windows DROP COLUMN provenance");  // schema 8
    sql.exec("ALTER TABLE windows DROP COLUMN skipped_dates");  // schema 9
    sql.exec("PRAGMA user_version = 6");
  }
  {
    SQLite::Database old(dir.database(), SQLite::OPEN_READONLY);
    EXPECT_EQ(detail::user_version(old), 6);
  }
  storage::Database db(dir.database());
  EXPECT_EQ(db.schema_version(), storage::current_schema_version());  // 7 when written; later versions follow
  EXPECT_EQ(db.sql().execAndGet("SELECT count(*) FROM returns WHERE checksum IS NULL").getInt(), 0);
  const storage::VerifyReport report = storage::verify_database(db);
  EXPECT_TRUE(report.problems.empty()) << report.problems.front().what;
  EXPECT_EQ(report.returns_rows, static_cast<std::size_t>(kT));
  EXPECT_EQ(report.windows, 3u);
  EXPECT_EQ(report.alignments, 3u);
  const long model = storage::find_model(db, "m")->id;
  for (const storage::WindowRecord& w : before) {
    const auto after = pipeline::read_served_window(db, model, w.as_of);
    ASSERT_TRUE(after) << w.as_of;
    EXPECT_EQ(after->fit.loadings, w.fit.loadings) << w.as_of;
    EXPECT_EQ(after->fit.specific_variance, w.fit.specific_variance) << w.as_of;
    EXPECT_EQ(after->fit.assets, w.fit.assets) << w.as_of;
  }
  // And the returns still read, refresh finds nothing to do, and a new load writes checksums.
  EXPECT_EQ(pipeline::refresh_model(db, "m").note, "every window is current");
  fw::load_returns(db, dir.file("r.csv"));
  EXPECT_TRUE(storage::verify_database(db).problems.empty());
}

}  // namespace
