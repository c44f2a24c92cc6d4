// Stored portfolios: holdings files (CSV and both JSON forms) read and stored exactly,
// in file order; the as-of date and benchmark rules; replacing, keeping and adding dates;
// reading at or before a date, listing and deleting; and every rejection, which names the
// file, line and field and leaves the database byte for byte as it was.
//
// The holdings are invented (portfolios are user input, not a published dataset): the
// checks are exactness and the rules of storage/include/factorwatch/storage/portfolios.h.
#include <gtest/gtest.h>

#include <SQLiteCpp/SQLiteCpp.h>

#include <cmath>
#include <cstring>
#include <limits>

#include "factorwatch/storage/ingest.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/portfolios.h"
#include "factorwatch/storage/timestamps.h"
#include "storage_fixtures.h"
#include "utf8_check.h"

namespace {

namespace fw = factorwatch::storage;
namespace fwt = factorwatch::testing;
namespace fwd = factorwatch::storage::detail;
namespace engine = factorwatch::engine;
using fwt::TempDir;

bool same_bits(double a, double b) { return std::memcmp(&a, &b, sizeof a) == 0; }

std::string exact(double v) {
  char text[40];
  std::snprintf(text, sizeof text, "%.17g", v);
  return text;
}

// Long-short, not adding up to one, with values that only survive exact handling: 17
// significant digits read back to the same double (IEEE 754-2008, clause 5.12.2), so the
// file below carries these bits and the store must keep them.
const engine::Holdings& awkward_holdings() {
  static const engine::Holdings h = {
      {"ZQ-0300", 0.1},
      {"ZQ-0007", -0.35},
      {"ZQ-0150", 1.0 / 3.0},
      {"ZQ-0001", -2.0 / 3.0},
      {"ZQ-0042", 1e-300},
      {"ZQ-0099", std::numeric_limits<double>::denorm_min()},
      {"ZQ-0011", 1234567.891},
      {"ZQ-0005", 0.0},
      {"ZQ, Inc \"A\"", 0.30000000000000004},  // a comma and quotes in a quoted CSV field
  };
  return h;
}

void expect_same_holdings(const engine::Holdings& got, const engine::Holdings& want) {
  ASSERT_EQ(got.size(), want.size());
  for (std::size_t i = 0; i < want.size(); ++i) {
    EXPECT_EQ(got[i].asset, want[i].asset) << "position " << i;
    EXPECT_TRUE(same_bits(got[i].weight, want[i].weight))
        << want[i].asset << ": " << exact(got[i].weight) << " against " << exact(want[i].weight);
  }
}

std::string csv_quoted(const std::string& s) {
  std::string out = "\"";
  for (char c : s) out += c == '"' ? std::string("\"\"") : std::string(1, c);
  return out + "\"";
}

// The CSV form, with a BOM, CRLF line ends, comments before the header and a blank line.
std::string awkward_csv() {
  std::string text = "\xEF\xBB\xBF# book: invented, for the test\r\n#\r\nasset,weight\r\n";
  for (std::size_t i = 0; i < awkward_holdings().size(); ++i) {
    const auto& h = awkward_holdings()[i];
    text += csv_quoted(h.asset) + "," + exact(h.weight) + "\r\n";
    if (i == 3) text += "\r\n";
  }
  return text;
}

std::string json_string(const std::string& s) {
  std::string out = "\"";
  for (char c : s) out += c == '"' ? std::string("\\\"") : std::string(1, c);
  return out + "\"";
}

fw::PortfolioFileOptions named(const std::string& name, const std::string& as_of = "",
                               const std::string& benchmark = "") {
  fw::PortfolioFileOptions o;
  o.name = name;
  if (!as_of.empty()) o.as_of = factorwatch::testing::day(as_of.c_str());
  o.benchmark = benchmark;
  return o;
}

std::string today() { return fw::utc_timestamp().substr(0, 10); }

TEST(PortfolioStore, CsvRoundTripKeepsEveryBitAndTheFileOrder) {
  TempDir dir;
  fwt::write_text(dir.file("book.csv"), awkward_csv());
  const fw::Portfolio p = fw::read_portfolio_file(dir.file("book.csv"), named("book", "2024-03-28"));
  EXPECT_EQ(p.name, "book");
  EXPECT_EQ(p.as_of.iso(), "2024-03-28");
  EXPECT_EQ(p.benchmark, "");
  EXPECT_EQ(p.source, dir.file("book.csv"));
  EXPECT_EQ(p.content_sha256.size(), 64u);
  EXPECT_EQ(p.stored_at, "");
  expect_same_holdings(p.holdings, awkward_holdings());

  fw::Database db(dir.database());
  const auto outcome = fw::save_portfolio(db, p);
  EXPECT_TRUE(outcome.created);
  EXPECT_FALSE(outcome.replaced);
  EXPECT_FALSE(outcome.unchanged);
  const auto back = fw::read_portfolio(db, "book");
  ASSERT_TRUE(back);
  EXPECT_EQ(back->as_of.iso(), "2024-03-28");
  EXPECT_EQ(back->source, dir.file("book.csv"));
  EXPECT_EQ(back->content_sha256, p.content_sha256);
  EXPECT_FALSE(back->stored_at.empty());
  expect_same_holdings(back->holdings, awkward_holdings());
}

TEST(PortfolioStore, JsonWeightsFormKeepsOrderAndValues) {
  TempDir dir;
  const std::string text =
      "\xEF\xBB\xBF\n  {\n"
      "  \"as_of\": \"2024-02-29\",\n"
      "  \"benchmark\": \"index.eq-1\",\n"
      "  \"weights\": {\"ZQ-0300\": 0.1, \"ZQ-0007\": -0.35, \"ZQ-0002\": 2, \"ZQ-0003\": -0.0,\n"
      "              \"ZQ-0001\": 1e-300, \"ZQ-0004\": 1000000000000000}\n"
      "}\n";
  fwt::write_text(dir.file("w.json"), text);
  const fw::Portfolio p = fw::read_portfolio_file(dir.file("w.json"), named("book"));
  EXPECT_EQ(p.as_of.iso(), "2024-02-29");  // the file's, no option given
  EXPECT_EQ(p.benchmark, "index.eq-1");
  // File order, not the sorted order a plain JSON object would give; -0 is stored as 0
  // (SQLite keeps an integral REAL as an integer, which has no sign of zero). ZQ-0004 is
  // the largest weight accepted (kLargestWeight), written as an integer.
  const engine::Holdings want = {{"ZQ-0300", 0.1},    {"ZQ-0007", -0.35}, {"ZQ-0002", 2.0},
                                 {"ZQ-0003", 0.0},    {"ZQ-0001", 1e-300},
                                 {"ZQ-0004", 1e15}};
  expect_same_holdings(p.holdings, want);
  fw::Database db(dir.database());
  fw::save_portfolio(db, p);
  const auto back = fw::read_portfolio(db, "book");
  ASSERT_TRUE(back);
  EXPECT_EQ(back->benchmark, "index.eq-1");
  expect_same_holdings(back->holdings, want);
}

// The same holdings in CSV, in JSON "weights" and in JSON "holdings" are the same content.
TEST(PortfolioStore, JsonHoldingsFormAndCsvGiveTheSameContent) {
  TempDir dir;
  std::string weights = "{\"weights\": {\n", holdings = "{\"holdings\": [\n";
  for (std::size_t i = 0; i < awkward_holdings().size(); ++i) {
    const auto& h = awkward_holdings()[i];
    const std::string comma = i + 1 < awkward_holdings().size() ? ",\n" : "\n";
    weights += "  " + json_string(h.asset) + ": " + exact(h.weight) + comma;
    holdings += "  {\"weight\": " + exact(h.weight) + ", \"asset\": " + json_string(h.asset) + "}" + comma;
  }
  weights += "}}\n";
  holdings += "]}\n";
  fwt::write_text(dir.file("book.csv"), awkward_csv());
  fwt::write_text(dir.file("w.json"), weights);
  fwt::write_text(dir.file("h.json"), holdings);
  const auto options = named("book", "2024-03-28");
  const fw::Portfolio from_csv = fw::read_portfolio_file(dir.file("book.csv"), options);
  const fw::Portfolio from_weights = fw::read_portfolio_file(dir.file("w.json"), options);
  const fw::Portfolio from_holdings = fw::read_portfolio_file(dir.file("h.json"), options);
  expect_same_holdings(from_weights.holdings, awkward_holdings());
  expect_same_holdings(from_holdings.holdings, awkward_holdings());
  EXPECT_EQ(from_weights.content_sha256, from_csv.content_sha256);
  EXPECT_EQ(from_holdings.content_sha256, from_csv.content_sha256);

  fw::Database db(dir.database());
  EXPECT_TRUE(fw::save_portfolio(db, from_csv).created);
  EXPECT_TRUE(fw::save_portfolio(db, from_weights).unchanged);
  EXPECT_TRUE(fw::save_portfolio(db, from_holdings).unchanged);
  // Unchanged keeps the first source.
  EXPECT_EQ(fw::read_portfolio(db, "book")->source, dir.file("book.csv"));
  // An upload from memory names its label as the source.
  const fw::Portfolio uploaded = fw::parse_portfolio_text(holdings, "HTTP upload", named("other", "2024-03-28"));
  EXPECT_EQ(uploaded.source, "HTTP upload");
  expect_same_holdings(uploaded.holdings, awkward_holdings());
}

// as_of: option > file > today (UTC); benchmark: option > file > none.
TEST(PortfolioStore, OptionsWinOverTheFileWhichWinsOverToday) {
  const std::string json = "{\"as_of\": \"2024-01-31\", \"benchmark\": \"bench-a\", \"weights\": {\"ZQ-1\": 1}}";
  EXPECT_EQ(fw::parse_portfolio_text(json, "j", named("p")).as_of.iso(), "2024-01-31");
  EXPECT_EQ(fw::parse_portfolio_text(json, "j", named("p", "2024-02-29")).as_of.iso(), "2024-02-29");
  EXPECT_EQ(fw::parse_portfolio_text(json, "j", named("p")).benchmark, "bench-a");
  EXPECT_EQ(fw::parse_portfolio_text(json, "j", named("p", "", "bench-b")).benchmark, "bench-b");
  // The file may name this portfolio's own name as benchmark only when the option replaces it.
  const std::string self = "{\"benchmark\": \"p\", \"weights\": {\"ZQ-1\": 1}}";
  EXPECT_EQ(fw::parse_portfolio_text(self, "j", named("p", "", "bench-b")).benchmark, "bench-b");
  // No date anywhere: today's UTC date (read twice around the call, in case midnight passes).
  const std::string before = today();
  const std::string got = fw::parse_portfolio_text("asset,weight\nZQ-1,1\n", "c", named("p")).as_of.iso();
  const std::string after = today();
  EXPECT_TRUE(got == before || got == after) << got;
  const std::string none = "{\"as_of\": null, \"benchmark\": null, \"weights\": {\"ZQ-1\": 1}}";
  EXPECT_EQ(fw::parse_portfolio_text(none, "j", named("p", "2024-02-29")).benchmark, "");
  EXPECT_EQ(fw::parse_portfolio_text("asset,weight\nZQ-1,1\n", "c", named("p", "2024-02-29")).benchmark, "");
}

fw::Portfolio csv_portfolio(const std::string& name, const std::string& as_of, const std::string& rows,
                            const std::string& benchmark = "") {
  return fw::parse_portfolio_text("asset,weight\n" + rows, name + ".csv", named(name, as_of, benchmark));
}

TEST(PortfolioStore, SameDateReplacesOrIsUnchangedAndOtherDatesStay) {
  TempDir dir;
  fw::Database db(dir.database());
  auto first = fw::save_portfolio(db, csv_portfolio("book", "2024-01-31", "ZQ-1,0.5\nZQ-2,0.5\n"));
  EXPECT_TRUE(first.created);
  const std::string stored_at = fw::read_portfolio(db, "book")->stored_at;

  auto same = fw::save_portfolio(db, csv_portfolio("book", "2024-01-31", " ZQ-1 , 0.50\nZQ-2,+5e-1\n"));
  EXPECT_TRUE(same.unchanged);
  EXPECT_FALSE(same.created);
  EXPECT_FALSE(same.replaced);
  EXPECT_EQ(fw::read_portfolio(db, "book")->stored_at, stored_at);

  auto changed = fw::save_portfolio(db, csv_portfolio("book", "2024-01-31", "ZQ-2,0.7\nZQ-3,0.3\n"));
  EXPECT_TRUE(changed.replaced);
  EXPECT_FALSE(changed.created);
  EXPECT_FALSE(changed.unchanged);
  expect_same_holdings(fw::read_portfolio(db, "book")->holdings, {{"ZQ-2", 0.7}, {"ZQ-3", 0.3}});

  // Only the benchmark differs: still a different set.
  auto benchmarked = fw::save_portfolio(db, csv_portfolio("book", "2024-01-31", "ZQ-2,0.7\nZQ-3,0.3\n", "idx"));
  EXPECT_TRUE(benchmarked.replaced);
  EXPECT_EQ(fw::read_portfolio(db, "book")->benchmark, "idx");

  auto later = fw::save_portfolio(db, csv_portfolio("book", "2024-02-29", "ZQ-1,1\n"));
  EXPECT_FALSE(later.created);
  EXPECT_FALSE(later.replaced);
  EXPECT_FALSE(later.unchanged);
  EXPECT_EQ(factorwatch::testing::iso_texts(fw::portfolio_dates(db, "book")), (std::vector<std::string>{"2024-01-31", "2024-02-29"}));
  expect_same_holdings(fw::read_portfolio(db, "book", factorwatch::testing::day("2024-01-31"))->holdings, {{"ZQ-2", 0.7}, {"ZQ-3", 0.3}});
  // The replaced set left no rows behind.
  EXPECT_EQ(db.sql().execAndGet("SELECT count(*) FROM holdings").getInt(), 3);
}

TEST(PortfolioStore, ReadsTheLatestSetAtOrBeforeADate) {
  TempDir dir;
  fw::Database db(dir.database());
  fw::save_portfolio(db, csv_portfolio("book", "2024-02-29", "ZQ-2,1\n"));
  fw::save_portfolio(db, csv_portfolio("book", "2024-01-31", "ZQ-1,1\n"));
  fw::save_portfolio(db, csv_portfolio("book", "2024-03-28", "ZQ-3,1\n"));
  EXPECT_EQ(fw::read_portfolio(db, "book")->as_of.iso(), "2024-03-28");
  EXPECT_EQ(fw::read_portfolio(db, "book", factorwatch::testing::day("2024-02-15"))->as_of.iso(), "2024-01-31");
  EXPECT_EQ(fw::read_portfolio(db, "book", factorwatch::testing::day("2024-02-29"))->as_of.iso(), "2024-02-29");
  EXPECT_EQ(fw::read_portfolio(db, "book", factorwatch::testing::day("2024-02-29"))->holdings.at(0).asset, "ZQ-2");
  EXPECT_EQ(fw::read_portfolio(db, "book", factorwatch::testing::day("2099-12-31"))->as_of.iso(), "2024-03-28");
  EXPECT_FALSE(fw::read_portfolio(db, "book", factorwatch::testing::day("2024-01-30")));
  EXPECT_FALSE(fw::read_portfolio(db, "nobody"));
  // A day that does not exist cannot be asked for: engine::Date holds real days only.
  EXPECT_FALSE(factorwatch::engine::Date::from_iso("2024-02-30"));
  EXPECT_EQ(factorwatch::testing::iso_texts(fw::portfolio_dates(db, "book")), (std::vector<std::string>{"2024-01-31", "2024-02-29", "2024-03-28"}));
  EXPECT_TRUE(fw::portfolio_dates(db, "nobody").empty());
  // Inside a transaction the caller holds (SQLite does not nest them) the reads still work.
  db.sql().exec("BEGIN");
  EXPECT_EQ(fw::read_portfolio(db, "book", factorwatch::testing::day("2024-02-15"))->as_of.iso(), "2024-01-31");
  EXPECT_EQ(fw::list_portfolios(db).size(), 1u);
  db.sql().exec("COMMIT");
}

TEST(PortfolioStore, ListsEachNameWithItsLatestSet) {
  TempDir dir;
  fw::Database db(dir.database());
  EXPECT_TRUE(fw::list_portfolios(db).empty());
  fw::save_portfolio(db, csv_portfolio("zeta", "2024-01-31", "ZQ-1,0.6\nZQ-2,0.4\n"));
  fw::save_portfolio(db, csv_portfolio("zeta", "2024-02-29", "ZQ-1,0.5\nZQ-2,-0.25\nZQ-3,0.1\n", "alpha"));
  fw::save_portfolio(db, csv_portfolio("alpha", "2024-01-31", "ZQ-1,2\n"));
  const auto list = fw::list_portfolios(db);
  ASSERT_EQ(list.size(), 2u);
  EXPECT_EQ(list[0].name, "alpha");
  EXPECT_EQ(list[0].dates, 1u);
  EXPECT_EQ(list[0].benchmark, "");
  EXPECT_EQ(list[1].name, "zeta");
  EXPECT_EQ(list[1].latest_as_of.iso(), "2024-02-29");
  EXPECT_EQ(list[1].dates, 2u);
  EXPECT_EQ(list[1].benchmark, "alpha");
  EXPECT_EQ(list[1].holdings, 3u);
  // Sums in file order, exactly as written here.
  EXPECT_TRUE(same_bits(list[1].net, 0.5 + -0.25 + 0.1)) << exact(list[1].net);
  EXPECT_TRUE(same_bits(list[1].gross, 0.5 + 0.25 + 0.1)) << exact(list[1].gross);
  EXPECT_FALSE(list[1].stored_at.empty());
}

TEST(PortfolioStore, DeletesOneDateOrAll) {
  TempDir dir;
  fw::Database db(dir.database());
  fw::save_portfolio(db, csv_portfolio("book", "2024-01-31", "ZQ-1,1\n"));
  fw::save_portfolio(db, csv_portfolio("book", "2024-02-29", "ZQ-2,1\n"));
  fw::save_portfolio(db, csv_portfolio("book", "2024-03-28", "ZQ-3,1\nZQ-4,1\n"));
  fw::save_portfolio(db, csv_portfolio("other", "2024-03-28", "ZQ-3,1\n"));
  EXPECT_EQ(fw::delete_portfolio(db, "book", factorwatch::testing::day("2024-02-29")), 1u);
  EXPECT_EQ(fw::delete_portfolio(db, "book", factorwatch::testing::day("2024-02-29")), 0u);
  EXPECT_EQ(factorwatch::testing::iso_texts(fw::portfolio_dates(db, "book")), (std::vector<std::string>{"2024-01-31", "2024-03-28"}));
  EXPECT_EQ(fw::read_portfolio(db, "book", factorwatch::testing::day("2024-02-29"))->as_of.iso(), "2024-01-31");
  EXPECT_EQ(fw::delete_portfolio(db, "nobody"), 0u);

  EXPECT_EQ(fw::delete_portfolio(db, "book"), 2u);
  EXPECT_FALSE(fw::read_portfolio(db, "book"));
  EXPECT_TRUE(fw::portfolio_dates(db, "book").empty());
  ASSERT_EQ(fw::list_portfolios(db).size(), 1u);
  EXPECT_EQ(fw::list_portfolios(db)[0].name, "other");
  // Nothing of it is left: the other portfolio's one holding only.
  EXPECT_EQ(db.sql().execAndGet("SELECT count(*) FROM holdings").getInt(), 1);
  EXPECT_EQ(db.sql().execAndGet("SELECT count(*) FROM holding_sets").getInt(), 1);

  // Deleting a name's last date removes the name: storing it again creates it.
  EXPECT_EQ(fw::delete_portfolio(db, "other", factorwatch::testing::day("2024-03-28")), 1u);
  EXPECT_TRUE(fw::list_portfolios(db).empty());
  EXPECT_TRUE(fw::save_portfolio(db, csv_portfolio("other", "2024-03-28", "ZQ-3,1\n")).created);
}

TEST(PortfolioStore, CountsHoldingsWithoutStoredReturnsAndKeepsThem) {
  TempDir dir;
  fw::Database db(dir.database());
  engine::ReturnsPanel panel;
  panel.dates = factorwatch::testing::dates_of({"2024-01-02", "2024-01-03"});
  panel.assets = {"ZQ-1", "ZQ-2"};
  panel.values.resize(2, 2);
  panel.values << 0.01, -0.02, 0.005, 0.0;
  fw::IngestSource source;
  source.path = "returns.csv";
  source.layout = "long";
  fw::store_returns(db, panel, source);

  const auto outcome =
      fw::save_portfolio(db, csv_portfolio("book", "2024-01-03", "ZQ-1,0.5\nZQ-GONE,0.2\nzq-2,0.2\nZQ-2,0.1\n"));
  EXPECT_EQ(outcome.unknown_assets, 2u);  // names match exactly: 'zq-2' is not 'ZQ-2'
  expect_same_holdings(fw::read_portfolio(db, "book")->holdings,
                       {{"ZQ-1", 0.5}, {"ZQ-GONE", 0.2}, {"zq-2", 0.2}, {"ZQ-2", 0.1}});
  // Counted on every save, unchanged or not.
  EXPECT_EQ(fw::save_portfolio(db, csv_portfolio("book", "2024-01-03", "ZQ-1,0.5\nZQ-GONE,0.2\nzq-2,0.2\nZQ-2,0.1\n"))
                .unknown_assets,
            2u);
}

// ---- Rejections -------------------------------------------------------------------

struct Rejection {
  std::string name;  // of the case, for the failure message
  std::string file;  // file name (its extension does not decide the format)
  std::string text;
  std::size_t line;
  std::string field;
  std::string words;  // part of the problem
};

void expect_rejected(const TempDir& dir, const Rejection& r) {
  SCOPED_TRACE(r.name);
  const std::string path = dir.file(r.file);
  fwt::write_text(path, r.text);
  try {
    fw::read_portfolio_file(path, named("book"));
    ADD_FAILURE() << "accepted";
  } catch (const fw::InputError& e) {
    EXPECT_EQ(e.path(), path);
    EXPECT_EQ(e.line(), r.line) << e.what();
    EXPECT_EQ(e.field(), r.field) << e.what();
    EXPECT_NE(e.problem().find(r.words), std::string::npos) << e.what();
    std::string prefix = path + (r.line > 0 ? ":" + std::to_string(r.line) : "") + ": ";
    if (!r.field.empty()) prefix += "field '" + r.field + "': ";
    EXPECT_EQ(std::string(e.what()).substr(0, prefix.size()), prefix) << e.what();
    // Messages end up in JSON: always valid UTF-8, whatever bytes the file held, and
    // without the parser's echo of the bytes it last read.
    EXPECT_FALSE(fwd::first_invalid_utf8(e.what())) << e.what();
    EXPECT_EQ(e.problem().find("last read"), std::string::npos) << e.what();
  }
}

TEST(PortfolioStore, RejectsBadCsvFilesNamingLineAndField) {
  TempDir dir;
  const std::string head = "# two comment lines\n#\nasset,weight\n";  // the header is line 3
  const std::vector<Rejection> cases = {
      {"empty file", "a.csv", "", 0, "", "the file is empty"},
      {"only comments", "a.csv", "# nothing\n\n", 0, "", "the file is empty"},
      {"no header", "a.csv", "ZQ-1,0.5\n", 1, "ZQ-1", "expected 'asset' as column 1"},
      {"wrong header", "a.csv", "asset,weights\nZQ-1,0.5\n", 1, "weights", "expected 'weight' as column 2"},
      {"swapped header", "a.csv", "weight,asset\n0.5,ZQ-1\n", 1, "weight", "expected 'asset' as column 1"},
      {"header too short", "a.csv", "\nasset\nZQ-1\n", 2, "weight", "column missing"},
      {"extra column", "a.csv", "asset,weight,sector\nZQ-1,0.5,x\n", 1, "sector", "unexpected column"},
      {"too few fields", "a.csv", head + "ZQ-1,0.5\nZQ-2\n", 5, "weight", "missing: the row has 1 fields"},
      {"too many fields", "a.csv", head + "ZQ-1,0.5,7\n", 4, "weight", "extra fields after this column"},
      {"unquoted decimal comma", "a.csv", head + "ZQ-1,1,5\n", 4, "weight", "the row has 3 fields"},
      {"empty asset", "a.csv", head + "ZQ-1,0.5\n,0.5\n", 5, "asset", "asset name is empty"},
      {"asset not UTF-8", "a.csv", head + "ZQ-\xE9,0.5\n", 4, "asset", "not valid UTF-8"},
      {"decimal comma", "a.csv", head + "ZQ-1,\"1,5\"\n", 4, "weight", "'1,5' is not a number"},
      {"nan", "a.csv", head + "ZQ-1,nan\n", 4, "weight", "'nan' is not a finite number"},
      {"inf", "a.csv", head + "ZQ-1,-inf\n", 4, "weight", "'-inf' is not a finite number"},
      {"overflow", "a.csv", head + "ZQ-1,1e999\n", 4, "weight", "'1e999' is not a finite number"},
      {"hex", "a.csv", head + "ZQ-1,0x10\n", 4, "weight", "'0x10' is not a number"},
      {"percent", "a.csv", head + "ZQ-1,1.5%\n", 4, "weight", "'1.5%' is not a number"},
      {"empty weight", "a.csv", head + "ZQ-1,\n", 4, "weight", "the weight is empty"},
      {"NA weight", "a.csv", head + "ZQ-1,NA\n", 4, "weight", "'NA' is not a number"},
      {"duplicate asset", "a.csv", head + "ZQ-1,0.5\nZQ-2,0.1\n\nZQ-1,0.4\n", 7, "asset",
       "asset 'ZQ-1' appears twice (lines 4 and 7)"},
      {"duplicate asset, CRLF", "a.csv", "asset,weight\r\nZQ-1,0.5\r\n\"ZQ-1\",0.4\r\n", 3, "asset",
       "appears twice (lines 2 and 3)"},
      {"no holdings", "a.csv", head + "\n", 3, "", "no holdings after the header"},
      {"comment among holdings", "a.csv", head + "ZQ-1,0.5\n# ZQ-2,0.5\n", 5, "", "a comment line among the data"},
      {"header case and weight field name", "a.csv", "Asset,Weight\nZQ-1,x\n", 2, "Weight", "'x' is not a number"},
  };
  for (const Rejection& r : cases) expect_rejected(dir, r);
}

TEST(PortfolioStore, RejectsBadJsonFilesNamingLineAndField) {
  TempDir dir;
  const std::vector<Rejection> cases = {
      {"missing comma", "a.json", "{\n  \"weights\": {\n    \"ZQ-1\": 0.5\n    \"ZQ-2\": 0.25\n  }\n}\n", 4, "",
       "not valid JSON: syntax error"},
      {"cut short", "a.json", "{\n  \"weights\": {\n    \"ZQ-1\": 0.5\n", 3, "", "not valid JSON"},
      {"text after the object", "a.json", "{\"weights\": {\"ZQ-1\": 1}}\n\nmore\n", 3, "", "not valid JSON"},
      {"comment", "a.json", "{\n// mine\n\"weights\": {\"ZQ-1\": 1}}\n", 2, "", "not valid JSON"},
      {"unknown member", "a.json", "{\n  \"as_of\": \"2024-01-31\",\n  \"weigths\": {\"ZQ-1\": 1}\n}\n", 3, "weigths",
       "unknown member"},
      {"both forms", "a.json",
       "{\"weights\": {\"ZQ-1\": 1},\n \"holdings\": [{\"asset\": \"ZQ-1\", \"weight\": 1}]}\n", 2, "holdings",
       "either weights or holdings, not both ('weights' is on line 1)"},
      {"neither form", "a.json", "\n{\"as_of\": \"2024-01-31\"}\n", 2, "", "no weights or holdings"},
      {"member twice", "a.json", "{\"as_of\": \"2024-01-31\",\n\"as_of\": \"2024-02-29\", \"weights\": {\"ZQ-1\": 1}}",
       2, "as_of", "member given twice (lines 1 and 2)"},
      {"asset twice in weights", "a.json", "{\"weights\": {\n\"ZQ-1\": 0.5,\n\"ZQ-2\": 0.1,\n\"ZQ-1\": 0.4}}\n", 4,
       "asset", "asset 'ZQ-1' appears twice (lines 2 and 4)"},
      {"asset twice in holdings", "a.json",
       "{\"holdings\": [\n{\"asset\": \"ZQ-1\", \"weight\": 0.5},\n{\"asset\": \"ZQ-1\", \"weight\": 0.4}]}\n", 3, "asset",
       "asset 'ZQ-1' appears twice (lines 2 and 3)"},
      {"weight as text", "a.json", "{\"weights\": {\n\"ZQ-1\": \"0.5\"}}\n", 2, "weight",
       "asset 'ZQ-1': the weight must be a number, not a string"},
      {"weight null", "a.json", "{\"holdings\": [\n{\"asset\": \"ZQ-1\",\n\"weight\": null}]}\n", 3, "weight",
       "must be a number, not null"},
      {"weight nested", "a.json", "{\"weights\": {\"ZQ-1\": {\"v\": [[1]]}}}\n", 1, "weight", "not an object"},
      {"weight overflow in weights", "a.json", "{\"weights\": {\n\"ZQ-1\": 1e999}}\n", 2, "weight",
       "asset 'ZQ-1': '1e999' is not a finite number"},
      {"weight overflow before a line end", "a.json", "{\"weights\": {\n\"ZQ-1\": 1e999\n}}\n", 2, "weight",
       "'1e999' is not a finite number"},
      {"weight overflow in holdings", "a.json", "{\"holdings\": [{\"asset\": \"ZQ-1\",\n\"weight\": -1e400}]}\n", 2,
       "weight", "'-1e400' is not a finite number"},
      {"empty asset", "a.json", "{\"weights\": {\"ZQ-1\": 0.5,\n\"\": 0.5}}\n", 2, "asset", "asset name is empty"},
      {"holding without weight", "a.json", "{\"holdings\": [\n{\"asset\": \"ZQ-1\"}]}\n", 2, "weight",
       "asset 'ZQ-1': the holding has no weight"},
      {"holding without asset", "a.json", "{\"holdings\": [\n{\"weight\": 1}]}\n", 2, "asset", "no asset"},
      // A holding is named by its opening brace's line, its members on the next line or not.
      {"holding without asset, brace at a line end", "a.json", "{\"holdings\": [{\n\"weight\": 1}]}\n", 1, "asset",
       "no asset"},
      {"asset not text", "a.json", "{\"holdings\": [{\"asset\": 7, \"weight\": 1}]}\n", 1, "asset",
       "must be a string, not a number"},
      {"unknown member in a holding", "a.json",
       "{\"holdings\": [{\"asset\": \"ZQ-1\",\n \"sector\": \"x\", \"weight\": 1}]}\n", 2, "sector",
       "unknown member: a holding has the members asset and weight"},
      {"holding not an object", "a.json", "{\"holdings\": [\n[\"ZQ-1\", 1]]}\n", 2, "holdings",
       "each holding is an object"},
      {"weights not an object", "a.json", "{\"weights\":\n [[\"ZQ-1\", 1]]}\n", 2, "weights", "must be an object"},
      {"holdings not an array", "a.json", "{\"holdings\": {\"ZQ-1\": 1}}\n", 1, "holdings", "must be an array"},
      {"empty weights", "a.json", "{\"as_of\": \"2024-01-31\",\n\"weights\": {}}\n", 2, "weights", "no holdings"},
      {"empty holdings", "a.json", "{\"holdings\": []}\n", 1, "holdings", "no holdings"},
      {"not a date", "a.json", "{\n\"as_of\": \"2024-02-30\", \"weights\": {\"ZQ-1\": 1}}\n", 2, "as_of",
       "'2024-02-30' is not a date in the form yyyy-mm-dd"},
      {"date not text", "a.json", "{\"as_of\": 20240131, \"weights\": {\"ZQ-1\": 1}}\n", 1, "as_of",
       "must be a string, not a number"},
      {"bad benchmark name", "a.json", "{\"weights\": {\"ZQ-1\": 1},\n\"benchmark\": \"my index\"}\n", 2,
       "benchmark", "'my index' cannot name a portfolio"},
      {"empty benchmark", "a.json", "{\"weights\": {\"ZQ-1\": 1},\n\"benchmark\": \"\"}\n", 2, "benchmark",
       "is empty"},
      {"own benchmark", "a.json", "{\"weights\": {\"ZQ-1\": 1},\n\"benchmark\": \"book\"}\n", 2, "benchmark",
       "cannot be its own benchmark"},
      {"bad UTF-8 in a string", "a.json", "{\"weights\": {\n\"ZQ-\xE9\": 1}}\n", 2, "",
       "not valid JSON: syntax error while parsing object key - invalid string: ill-formed UTF-8 byte"},
  };
  for (const Rejection& r : cases) expect_rejected(dir, r);
}

TEST(PortfolioStore, RejectsBadOptionsBeforeReadingTheFile) {
  const std::string good = "asset,weight\nZQ-1,1\n";
  for (const std::string& name : {std::string(""), std::string("my book"), std::string(65, 'a'), std::string("a/b")})
    EXPECT_THROW(fw::parse_portfolio_text(good, "c", named(name)), std::invalid_argument) << name;
  EXPECT_TRUE(fw::is_portfolio_name(std::string(64, 'a')));
  EXPECT_TRUE(fw::is_portfolio_name("eq.index_2-b"));
  EXPECT_FALSE(fw::is_portfolio_name("é"));
  EXPECT_THROW(fw::parse_portfolio_text(good, "c", named("p", "2024-13-01")), std::invalid_argument);
  EXPECT_THROW(fw::parse_portfolio_text(good, "c", named("p", "31/01/2024")), std::invalid_argument);
  EXPECT_THROW(fw::parse_portfolio_text(good, "c", named("p", "", "an index")), std::invalid_argument);
  EXPECT_THROW(fw::parse_portfolio_text(good, "c", named("p", "", "p")), std::invalid_argument);
  // A bad option is reported even when the file is bad too.
  EXPECT_THROW(fw::parse_portfolio_text("nonsense", "c", named("")), std::invalid_argument);
  // A file that cannot be read: no line.
  try {
    fw::read_portfolio_file("/nonexistent/book.csv", named("p"));
    ADD_FAILURE() << "read a missing file";
  } catch (const fw::InputError& e) {
    EXPECT_EQ(e.line(), 0u);
    EXPECT_NE(e.problem().find("cannot open"), std::string::npos) << e.what();
  }
}

// Holdings built in code (the HTTP layer may) get the same rules at the door of the store.
TEST(PortfolioStore, SaveRefusesHoldingsNoFileCouldHold) {
  TempDir dir;
  fw::Database db(dir.database());
  fw::Portfolio good = csv_portfolio("book", "2024-01-31", "ZQ-1,1\n");
  auto bad = [&](auto change) {
    fw::Portfolio p = good;
    change(p);
    return p;
  };
  EXPECT_THROW(fw::save_portfolio(db, bad([](fw::Portfolio& p) { p.name = "a b"; })), std::invalid_argument);
  EXPECT_THROW(fw::save_portfolio(db, bad([](fw::Portfolio& p) { p.benchmark = "book"; })), std::invalid_argument);
  EXPECT_THROW(fw::save_portfolio(db, bad([](fw::Portfolio& p) { p.holdings.clear(); })), std::invalid_argument);
  EXPECT_THROW(fw::save_portfolio(db, bad([](fw::Portfolio& p) { p.holdings.push_back({"ZQ-1", 2}); })),
               std::invalid_argument);
  EXPECT_THROW(fw::save_portfolio(db, bad([](fw::Portfolio& p) { p.holdings.push_back({"", 2}); })),
               std::invalid_argument);
  EXPECT_THROW(fw::save_portfolio(db, bad([](fw::Portfolio& p) { p.holdings[0].weight = std::nan(""); })),
               std::invalid_argument);
  EXPECT_TRUE(fw::list_portfolios(db).empty());
  // The stored hash describes the stored rows, whatever the caller put in the field.
  fw::Portfolio odd = good;
  odd.content_sha256 = "not a hash";
  fw::save_portfolio(db, odd);
  EXPECT_EQ(fw::read_portfolio(db, "book")->content_sha256, good.content_sha256);
}

// The all-or-nothing rule at the byte level: a rejected file (or a rejected save, or a
// save that changes nothing) leaves the database file and its write-ahead log as they were.
TEST(PortfolioStore, RejectedFileLeavesTheDatabaseFileUnchanged) {
  TempDir dir;
  fw::Database db(dir.database());
  fw::save_portfolio(db, csv_portfolio("book", "2024-01-31", "ZQ-1,0.5\nZQ-2,0.5\n"));
  const std::string db_before = fwt::read_bytes(dir.database());
  const std::string wal_before = fwt::read_bytes(dir.database() + "-wal");
  ASSERT_FALSE(db_before.empty());

  // What a command does: read the file, then store it.
  auto store_file = [&](const std::string& name, const std::string& text) {
    fwt::write_text(dir.file(name), text);
    fw::save_portfolio(db, fw::read_portfolio_file(dir.file(name), named("book", "2024-01-31")));
  };
  // Valid rows first, then one bad one: nothing of the file may land.
  EXPECT_THROW(store_file("bad.csv", "asset,weight\nZQ-1,0.25\nZQ-3,0.25\nZQ-4,zero\n"), fw::InputError);
  EXPECT_THROW(store_file("bad.json", "{\"weights\": {\"ZQ-1\": 0.25, \"ZQ-3\": 0.5, \"ZQ-3\": 0.25}}"),
               fw::InputError);
  fw::Portfolio twice = csv_portfolio("book", "2024-01-31", "ZQ-1,0.25\n");
  twice.holdings.push_back({"ZQ-1", 0.75});
  EXPECT_THROW(fw::save_portfolio(db, twice), std::invalid_argument);
  EXPECT_TRUE(fw::save_portfolio(db, csv_portfolio("book", "2024-01-31", "ZQ-1,0.5\nZQ-2,0.5\n")).unchanged);

  EXPECT_EQ(fwt::read_bytes(dir.database()), db_before);
  EXPECT_EQ(fwt::read_bytes(dir.database() + "-wal"), wal_before);
  expect_same_holdings(fw::read_portfolio(db, "book")->holdings, {{"ZQ-1", 0.5}, {"ZQ-2", 0.5}});
}

}  // namespace
