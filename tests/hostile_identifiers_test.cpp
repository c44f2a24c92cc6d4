// Hostile asset identifiers end to end, through the real `factorwatch`: names holding
// quotes, semicolons, SQL, path separators, shell and printf syntax, and the longest name
// allowed are stored exactly and read back exactly through CSV (quoted), JSON (escaped)
// and the table; names with control characters or NUL are refused naming file, line and
// field, with the database unchanged; names stored before the rule (an older database)
// are escaped in the table and kept exact in CSV and JSON.
//
// Names are invented.
#include <gtest/gtest.h>

#include <SQLiteCpp/SQLiteCpp.h>

#include <nlohmann/json.hpp>
#include <set>
#include <string>
#include <vector>

#include "factorwatch/storage/assets.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/identifier_rule.h"
#include "factorwatch/storage/portfolios.h"
#include "storage_fixtures.h"

namespace {

namespace fw = factorwatch::storage;
namespace fwt = factorwatch::testing;
using nlohmann::json;

const std::vector<std::string>& hostile_names() {
  static const std::vector<std::string> names = {
      "x'); DROP TABLE returns;--",
      "Robert\"); DROP TABLE assets;--",
      "semi;colon",
      "a/b",
      "..\\c",
      "../../etc/passwd",
      "comma, inside",
      "quote \"q\" and 'r'",
      "%s%n%x",
      "$(touch pwned) `id`",
      "=1+2",
      "Zürich Fonds 東京",
      "long-" + std::string(fw::kLongestIdentifier - 5, 'x'),  // exactly the longest allowed
  };
  return names;
}

// RFC 4180: every field quoted, quotes doubled.
std::string quoted_field(const std::string& text) {
  std::string out = "\"";
  for (char c : text) out += c == '"' ? std::string("\"\"") : std::string(1, c);
  return out + "\"";
}

bool has_raw_control(const std::string& text) {
  for (unsigned char b : text)
    if ((b < 0x20 && b != '\n') || b == 0x7f) return true;
  return false;
}

class HostileIdentifiers : public ::testing::Test {
 protected:
  fwt::CommandResult run(const std::string& arguments) { return fwt::run_factorwatch(dir_.path(), arguments); }
  std::string write(const std::string& name, const std::string& bytes) {
    fwt::write_text(dir_.file(name), bytes);
    return dir_.file(name);
  }
  fwt::TempDir dir_;
};

TEST_F(HostileIdentifiers, AllowedNamesAreStoredAndShownExactly) {
  std::string returns = "date,asset,return\n", holdings = "asset,weight\n";
  for (const char* date : {"2024-01-02", "2024-01-03", "2024-01-04"})
    for (const std::string& name : hostile_names()) returns += std::string(date) + "," + quoted_field(name) + ",0.01\n";
  for (const std::string& name : hostile_names()) holdings += quoted_field(name) + ",0.05\n";
  const auto loaded = run("load '" + write("returns.csv", returns) + "'");
  ASSERT_EQ(loaded.status, 0) << loaded.err;
  ASSERT_EQ(run("portfolio set book '" + write("book.csv", holdings) + "' --as-of 2024-01-31").status, 0);

  {  // The database: every name exactly, and the tables the SQL text names are intact.
    fw::Database db(dir_.database());
    std::set<std::string> stored;
    for (const auto& a : fw::list_assets(db)) stored.insert(a.name);
    EXPECT_EQ(stored, std::set<std::string>(hostile_names().begin(), hostile_names().end()));
    SQLite::Statement count(db.sql(), "SELECT count(*) FROM returns");
    ASSERT_TRUE(count.executeStep());
    EXPECT_EQ(count.getColumn(0).getInt(), 3);
  }

  // CSV: read back by the holdings reader itself (it is a holdings file): the same names.
  const auto csv = run("portfolio show book --format csv");
  ASSERT_EQ(csv.status, 0) << csv.err;
  const fw::Portfolio back = fw::parse_portfolio_text(csv.out, "show.csv", {"back", factorwatch::testing::day("2024-01-31"), ""});
  ASSERT_EQ(back.holdings.size(), hostile_names().size());
  for (std::size_t i = 0; i < back.holdings.size(); ++i) EXPECT_EQ(back.holdings[i].asset, hostile_names()[i]);
  EXPECT_NE(csv.out.find("\"Robert\"\"); DROP TABLE assets;--\",0.05"), std::string::npos) << csv.out;
  EXPECT_NE(csv.out.find("\"comma, inside\",0.05"), std::string::npos) << csv.out;

  // JSON: escaped by the encoder, equal after parsing.
  const auto js = run("portfolio show book --format json");
  ASSERT_EQ(js.status, 0) << js.err;
  const json j = json::parse(js.out);
  ASSERT_EQ(j["holdings"].size(), hostile_names().size());
  for (std::size_t i = 0; i < hostile_names().size(); ++i) EXPECT_EQ(j["holdings"][i]["asset"], hostile_names()[i]);

  // Table: printable names are shown as they are.
  const auto table = run("portfolio show book");
  ASSERT_EQ(table.status, 0) << table.err;
  for (const std::string& name : hostile_names()) EXPECT_NE(table.out.find(name), std::string::npos) << name;
}

TEST_F(HostileIdentifiers, ControlCharactersAndNulAreRefusedAndChangeNothing) {
  ASSERT_EQ(run("load '" + write("first.csv", "date,ZQ\n2024-01-02,0.01\n") + "'").status, 0);
  ASSERT_EQ(run("portfolio set book '" + write("b.csv", "asset,weight\nZQ,1\n") + "' --as-of 2024-01-31").status, 0);
  const std::string db_before = fwt::read_bytes(dir_.database());
  const std::string wal_before = fwt::read_bytes(dir_.database() + "-wal");

  const std::string nul(1, '\0');
  const struct {
    std::string command, file, bytes, where;  // command: the file goes after it
  } cases[] = {
      {"load", "esc.csv", "date,asset,return\n2024-01-02,ZQ,0.01\n2024-01-02,\"ZQ\x1b[2J\",0.02\n",
       "esc.csv:3: field 'asset': the asset name 'ZQ\\x1B[2J' holds a control character (U+001B)"},
      {"load", "newline.csv", "date,ZQ,\"ZQ\nX\"\n2024-01-02,0.01,0.02\n",
       "newline.csv:1: field 'column 3': the asset name 'ZQ\\x0AX' holds a control character (U+000A)"},
      {"load", "nul.csv", "date,ZQ,ZQ" + nul + "a,ZQ" + nul + "b\n2024-01-02,0.01,0.02,0.03\n",
       "nul.csv:1: a NUL byte (0x00) at column 11"},
      {"load", "c1.csv", "date,asset,return\n2024-01-02,ZQ\xc2\x9b" "31m,0.01\n",
       "c1.csv:2: field 'asset': the asset name 'ZQ\\u009B31m' holds a control character (U+009B)"},
      {"portfolio set book --as-of 2024-02-29", "nul.json", "{\"weights\": {\"ZQ\": 0.5,\n \"ZQ\\u0000a\": 0.5}}\n",
       "nul.json:2: field 'asset': the asset name 'ZQ\\x00a' holds a control character (U+0000)"},
      {"portfolio set book --as-of 2024-02-29", "esc.csv", "asset,weight\n\"ZQ\x1b]0;x\x07\",1\n",
       "esc.csv:2: field 'asset': the asset name 'ZQ\\x1B]0;x\\x07' holds a control character"},
  };
  for (const auto& c : cases) {
    const auto r = run(c.command + " '" + write(c.file, c.bytes) + "'");
    EXPECT_EQ(r.status, 2) << c.file << ": " << r.err;
    EXPECT_NE(r.err.find(c.where), std::string::npos) << c.file << ": " << r.err;
    EXPECT_FALSE(has_raw_control(r.err)) << c.file << ": " << r.err;
  }
  EXPECT_EQ(fwt::read_bytes(dir_.database()), db_before);
  EXPECT_EQ(fwt::read_bytes(dir_.database() + "-wal"), wal_before);
}

TEST_F(HostileIdentifiers, NamesStoredBeforeTheRuleAreEscapedInTheTableOnly) {
  ASSERT_EQ(run("portfolio set book '" + write("b.csv", "asset,weight\nOLD-1,0.25\nOLD-2,0.75\n") +
                "' --as-of 2024-01-31")
                .status,
            0);
  // An older database: names the readers now refuse, written straight into the table.
  const std::string escape_name = "ZQ\x1b[31mRED\nX";
  const std::string nul_name("ZQ\0a", 4);
  {
    fw::Database db(dir_.database());
    SQLite::Statement set(db.sql(), "UPDATE holdings SET asset = ? WHERE asset = ?");
    for (const auto& [from, to] : {std::pair<std::string, std::string>{"OLD-1", escape_name}, {"OLD-2", nul_name}}) {
      set.bind(1, to);
      set.bind(2, from);
      ASSERT_EQ(set.exec(), 1);
      set.reset();
    }
  }
  const auto table = run("portfolio show book");
  ASSERT_EQ(table.status, 0) << table.err;
  EXPECT_NE(table.out.find("ZQ\\x1B[31mRED\\x0AX"), std::string::npos) << table.out;
  EXPECT_NE(table.out.find("ZQ\\x00a"), std::string::npos) << table.out;
  EXPECT_FALSE(has_raw_control(table.out)) << table.out;
  EXPECT_EQ(table.out.find('\0'), std::string::npos);

  const auto csv = run("portfolio show book --format csv");
  ASSERT_EQ(csv.status, 0) << csv.err;
  EXPECT_NE(csv.out.find("\"" + escape_name + "\",0.25\n"), std::string::npos) << csv.out;  // exact, quoted
  EXPECT_NE(csv.out.find(nul_name + ",0.75\n"), std::string::npos);

  const auto js = run("portfolio show book --format json");
  ASSERT_EQ(js.status, 0) << js.err;
  EXPECT_NE(js.out.find("ZQ\\u001b[31mRED\\nX"), std::string::npos) << js.out;  // escaped by the encoder
  const json j = json::parse(js.out);
  EXPECT_EQ(j["holdings"][0]["asset"], escape_name);
  EXPECT_EQ(j["holdings"][1]["asset"], nul_name);
}

}  // namespace
