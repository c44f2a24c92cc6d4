// The ingest error catalogue (tests/ingest-catalogue/): every malformed file there must be
// rejected by read_returns_file with exactly the line and column its manifest row names,
// and a message holding the manifest's words. The manifest lists every file, so a file
// added without a row fails here instead of going unchecked.
#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <set>
#include <string>
#include <vector>

#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/returns_csv.h"
#include "storage_fixtures.h"

namespace fs = std::filesystem;
using factorwatch::storage::InputError;
using factorwatch::storage::read_returns_file;
using factorwatch::storage::ValuesInFile;

namespace {

const std::string kFolder = FACTORWATCH_CATALOGUE_DIR;
const std::string kManifest = "catalogue.csv";

struct Entry {
  std::string file, values, field, message;
  std::size_t line = 0;
  std::size_t manifest_line = 0;
};

// One manifest record: plain fields, or fields in double quotes (which may hold commas
// and doubled quotes). Records are one line each.
std::vector<std::string> split_record(const std::string& text) {
  std::vector<std::string> fields(1);
  bool quoted = false;
  for (std::size_t i = 0; i < text.size(); ++i) {
    const char c = text[i];
    if (quoted) {
      if (c == '"' && i + 1 < text.size() && text[i + 1] == '"') {
        fields.back() += '"';
        ++i;
      } else if (c == '"') {
        quoted = false;
      } else {
        fields.back() += c;
      }
    } else if (c == '"') {
      quoted = true;
    } else if (c == ',') {
      fields.emplace_back();
    } else if (c != '\r') {
      fields.back() += c;
    }
  }
  return fields;
}

std::vector<Entry> read_manifest() {
  std::ifstream in(kFolder + "/" + kManifest);
  EXPECT_TRUE(in) << "cannot open " << kFolder << "/" << kManifest;
  std::vector<Entry> entries;
  std::string text;
  bool header = true;
  for (std::size_t line = 1; std::getline(in, text); ++line) {
    if (text.empty() || text[0] == '#') continue;
    const std::vector<std::string> f = split_record(text);
    if (header) {
      EXPECT_EQ(f, (std::vector<std::string>{"file", "values", "line", "field", "message_contains"}));
      header = false;
      continue;
    }
    EXPECT_EQ(f.size(), 5u) << kManifest << ":" << line;
    if (f.size() != 5) continue;
    entries.push_back({f[0], f[1], f[3], f[4], std::stoul(f[2]), line});
  }
  return entries;
}

ValuesInFile values_of(const std::string& name) {
  if (name == "prices") return ValuesInFile::prices_to_simple_returns;
  if (name == "log-prices") return ValuesInFile::prices_to_log_returns;
  EXPECT_EQ(name, "returns") << "unknown values kind";
  return ValuesInFile::returns;
}

TEST(IngestCatalogue, ManifestCoversTheFolder) {
  const std::vector<Entry> entries = read_manifest();
  EXPECT_GE(entries.size(), 25u);
  std::set<std::string> listed;
  for (const Entry& e : entries) {
    EXPECT_TRUE(listed.insert(e.file).second) << e.file << " listed twice";
    EXPECT_FALSE(e.message.empty()) << e.file;
  }
  std::set<std::string> present;
  for (const auto& item : fs::directory_iterator(kFolder))
    if (item.path().filename() != kManifest) present.insert(item.path().filename().string());
  EXPECT_EQ(listed, present);
}

TEST(IngestCatalogue, EveryFileIsRejectedAsListed) {
  for (const Entry& e : read_manifest()) {
    SCOPED_TRACE(kManifest + ":" + std::to_string(e.manifest_line) + " " + e.file);
    const std::string path = kFolder + "/" + e.file;
    try {
      read_returns_file(path, {values_of(e.values)});
      ADD_FAILURE() << "accepted";
    } catch (const InputError& error) {
      const std::string what = error.what();
      EXPECT_EQ(error.path(), path);
      EXPECT_EQ(error.line(), e.line) << what;
      EXPECT_EQ(error.field(), e.field) << what;
      EXPECT_NE(what.find(e.message), std::string::npos) << what;
      // what() is "FILE:LINE: field 'NAME': problem", leaving out the parts that do not apply.
      std::string prefix = path + (e.line > 0 ? ":" + std::to_string(e.line) : "") + ": ";
      if (!e.field.empty()) prefix += "field '" + e.field + "': ";
      EXPECT_EQ(what.rfind(prefix, 0), 0u) << what << "\nwanted prefix " << prefix;
    }
  }
}

// The all-or-nothing rule through the real command: every catalogue file, loaded into a
// database that already holds returns and a fitted model, exits with status 2 and the
// same message, and leaves the database file and its write-ahead log byte for byte as
// they were.
TEST(IngestCatalogue, EveryFileLeavesTheDatabaseUnchanged) {
  factorwatch::testing::TempDir dir;
  std::string good = "date,asset,return\n";
  const auto dates = factorwatch::testing::iso_texts(factorwatch::testing::business_dates(60));
  for (std::size_t t = 0; t < dates.size(); ++t)
    for (int i = 0; i < 4; ++i)
      good += dates[t] + ",ZQ-000" + std::to_string(i + 1) + "," + std::to_string(0.001 * ((t * 7 + i * 3) % 11) - 0.005) + "\n";
  factorwatch::testing::write_text(dir.file("good.csv"), good);
  using factorwatch::testing::run_factorwatch;
  ASSERT_EQ(run_factorwatch(dir.path(), "load " + dir.file("good.csv")).status, 0);
  ASSERT_EQ(run_factorwatch(dir.path(), "model set m --method pca --factors 1 --window 50 --step 5").status, 0);
  ASSERT_EQ(run_factorwatch(dir.path(), "refresh m").status, 0);
  const std::string db = factorwatch::testing::read_bytes(dir.database());
  const std::string wal = factorwatch::testing::read_bytes(dir.database() + "-wal");
  ASSERT_FALSE(db.empty());
  for (const Entry& e : read_manifest()) {
    SCOPED_TRACE(kManifest + ":" + std::to_string(e.manifest_line) + " " + e.file);
    const std::string options = e.values == "prices" ? " --prices" : e.values == "log-prices" ? " --prices --log-returns" : "";
    const auto r = run_factorwatch(dir.path(), "load '" + kFolder + "/" + e.file + "'" + options);
    EXPECT_EQ(r.status, 2) << r.out;
    EXPECT_NE(r.err.find(e.message), std::string::npos) << r.err;
    EXPECT_NE(r.err.find("the database is unchanged"), std::string::npos) << r.err;
    EXPECT_TRUE(factorwatch::testing::read_bytes(dir.database()) == db);
    EXPECT_TRUE(factorwatch::testing::read_bytes(dir.database() + "-wal") == wal);
  }
}

}  // namespace
