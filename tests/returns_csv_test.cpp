// Reading returns files (storage::read_returns_csv, read_returns_file): layouts, gaps,
// order, CSV details, prices, every error path, speed, and the EuStockMarkets reference
// file written by R. Each malformed-file rule also has a file in tests/ingest-catalogue/.
#include <gtest/gtest.h>
#include <unistd.h>

#include <cmath>
#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/returns_csv.h"
#include "factorwatch/storage/timestamps.h"
#include "storage_fixtures.h"

namespace fs = std::filesystem;
using factorwatch::engine::ReturnsPanel;
using factorwatch::storage::InputError;
using factorwatch::storage::read_returns_csv;
using factorwatch::storage::read_returns_file;
using factorwatch::storage::ReturnsFile;
using factorwatch::storage::ValuesInFile;

namespace {

// Each test writes its files into its own fresh folder under the system temp folder.
class ReturnsCsv : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    dir_ = fs::temp_directory_path() /
           ("factorwatch_returns_" + std::to_string(::getpid()) + "_" + info->name());
    fs::remove_all(dir_);
    fs::create_directories(dir_);
  }
  void TearDown() override { fs::remove_all(dir_); }

  std::string write(const std::string& name, const std::string& content) {
    const std::string path = (dir_ / name).string();
    std::ofstream(path, std::ios::binary) << content;
    return path;
  }

  // The file must be rejected with "PATH:LINE: field 'FIELD': ..." mentioning `words`.
  void expect_error(const std::string& content, std::size_t line, const std::string& field,
                    const std::string& words, ValuesInFile values = ValuesInFile::returns) {
    const std::string path = write("bad.csv", content);
    try {
      read_returns_file(path, {values});
      ADD_FAILURE() << "accepted:\n" << content;
    } catch (const InputError& e) {
      // A problem not about one column leaves the field part out.
      const std::string prefix =
          path + ":" + std::to_string(line) + ": " + (field.empty() ? "" : "field '" + field + "': ");
      EXPECT_EQ(std::string(e.what()).rfind(prefix, 0), 0u) << e.what() << "\nwanted prefix " << prefix;
      EXPECT_EQ(e.line(), line) << e.what();
      EXPECT_EQ(e.field(), field) << e.what();
      EXPECT_NE(std::string(e.what()).find(words), std::string::npos) << e.what();
    }
  }

  fs::path dir_;
};

void expect_same_panel(const ReturnsPanel& a, const ReturnsPanel& b) {
  ASSERT_EQ(a.dates, b.dates);
  ASSERT_EQ(a.assets, b.assets);
  ASSERT_EQ(a.values.rows(), b.values.rows());
  ASSERT_EQ(a.values.cols(), b.values.cols());
  for (Eigen::Index i = 0; i < a.values.rows(); ++i)
    for (Eigen::Index j = 0; j < a.values.cols(); ++j) {
      if (std::isnan(a.values(i, j))) {
        EXPECT_TRUE(std::isnan(b.values(i, j))) << i << "," << j;
      } else {
        EXPECT_EQ(a.values(i, j), b.values(i, j)) << i << "," << j;
      }
    }
}

const char* kWide =
    "date,AAA,BBB,CCC\n"
    "2024-01-02,0.01,-0.02,0.5\n"
    "2024-01-03,,NA,0.25\n"
    "2024-01-04,-1e-3,na,1.5E-2\n";

// The same returns, one row per (date, asset), asset by asset, columns shuffled; the
// gaps are written once as an explicit NA and once simply left out.
const char* kLong =
    "asset,return,date\n"
    "AAA,0.01,2024-01-02\n"
    "AAA,,2024-01-03\n"
    "AAA,-1e-3,2024-01-04\n"
    "BBB,-0.02,2024-01-02\n"
    "BBB,NA,2024-01-03\n"
    "CCC,0.5,2024-01-02\n"
    "CCC,0.25,2024-01-03\n"
    "CCC,1.5E-2,2024-01-04\n";

TEST_F(ReturnsCsv, WideLayout) {
  const ReturnsPanel p = read_returns_csv(write("wide.csv", kWide));
  EXPECT_EQ(factorwatch::testing::iso_texts(p.dates), (std::vector<std::string>{"2024-01-02", "2024-01-03", "2024-01-04"}));
  EXPECT_EQ(p.assets, (std::vector<std::string>{"AAA", "BBB", "CCC"}));
  ASSERT_EQ(p.periods(), 3);
  ASSERT_EQ(p.width(), 3);
  EXPECT_EQ(p.values(0, 0), 0.01);
  EXPECT_EQ(p.values(0, 1), -0.02);
  EXPECT_EQ(p.values(2, 0), -1e-3);
  EXPECT_EQ(p.values(2, 2), 1.5e-2);
}

TEST_F(ReturnsCsv, GapsBecomeQuietNaN) {
  const ReturnsPanel p = read_returns_csv(write("wide.csv", kWide));
  EXPECT_TRUE(std::isnan(p.values(1, 0)));  // empty cell
  EXPECT_TRUE(std::isnan(p.values(1, 1)));  // NA
  EXPECT_TRUE(std::isnan(p.values(2, 1)));  // na
  EXPECT_FALSE(std::isnan(p.values(1, 2)));
}

TEST_F(ReturnsCsv, NaInAnyCaseAndQuotedStaysAGap) {
  // R's write.csv writes NA for a missing value; quoting does not change what a cell is.
  const ReturnsPanel p = read_returns_csv(write("na.csv",
                                                "date,asset,return\n"
                                                "2024-01-02,ZQ-0001,NA\n"
                                                "2024-01-02,ZQ-0002,\"NA\"\n"
                                                "2024-01-03,ZQ-0001,Na\n"
                                                "2024-01-03,ZQ-0002, nA \n"
                                                "2024-01-04,ZQ-0001,0.01\n"));
  ASSERT_EQ(p.periods(), 3);
  ASSERT_EQ(p.width(), 2);
  EXPECT_TRUE(p.values.topRows(2).array().isNaN().all());
  EXPECT_EQ(p.values(2, 0), 0.01);
  EXPECT_TRUE(std::isnan(p.values(2, 1)));  // no row at all
}

TEST_F(ReturnsCsv, LongAndWideGiveTheSamePanel) {
  expect_same_panel(read_returns_csv(write("wide.csv", kWide)), read_returns_csv(write("long.csv", kLong)));
}

TEST_F(ReturnsCsv, LongRowsInAnyOrder) {
  // Same content as kLong; after the first row of each asset, rows come in no order at all
  // (the reader guesses the next date and asset to skip hashing; wrong guesses must not matter).
  const ReturnsPanel p = read_returns_csv(write("long.csv",
                                                "date,asset,return\n"
                                                "2024-01-03,AAA,\n"
                                                "2024-01-02,BBB,-0.02\n"
                                                "2024-01-04,CCC,1.5E-2\n"
                                                "2024-01-02,AAA,0.01\n"
                                                "2024-01-03,CCC,0.25\n"
                                                "2024-01-03,BBB,NA\n"
                                                "2024-01-04,AAA,-1e-3\n"
                                                "2024-01-02,CCC,0.5\n"));
  expect_same_panel(read_returns_csv(write("wide.csv", kWide)), p);
}

TEST_F(ReturnsCsv, LongLayoutLeftOutRowIsAGap) {
  const ReturnsPanel p = read_returns_csv(write("long.csv", kLong));
  EXPECT_TRUE(std::isnan(p.values(2, 1)));  // BBB has no row for 2024-01-04
}

TEST_F(ReturnsCsv, LongRowsAreSortedByDate) {
  // Long rows in date-descending order, with a year boundary (keys sort as numbers).
  const ReturnsPanel q = read_returns_csv(write("long.csv",
                                                "date,asset,return\n"
                                                "2024-01-01,X,0.3\n"
                                                "2023-12-29,X,0.2\n"
                                                "2023-02-28,X,0.1\n"));
  EXPECT_EQ(factorwatch::testing::iso_texts(q.dates), (std::vector<std::string>{"2023-02-28", "2023-12-29", "2024-01-01"}));
  EXPECT_EQ(q.values(0, 0), 0.1);
  EXPECT_EQ(q.values(2, 0), 0.3);
}

// A larger long file with its rows in a random order (fixed seed) reads like the same rows
// date by date: nothing in the long reader may depend on the order of the rows.
TEST_F(ReturnsCsv, LongFileInShuffledOrder) {
  const auto dates = factorwatch::testing::iso_texts(factorwatch::testing::business_dates(40));
  std::vector<std::string> rows;
  for (int t = 0; t < 40; ++t)
    for (int i = 0; i < 9; ++i) {
      if ((t * 9 + i) % 11 == 3) continue;  // some pairs simply absent
      char row[96];
      const char* value = (t * 9 + i) % 13 == 5 ? "NA" : nullptr;
      char number[32];
      std::snprintf(number, sizeof number, "%.6f", 0.001 * ((t * 31 + i * 17) % 41 - 20));
      std::snprintf(row, sizeof row, "%s,ZQ-%04d,%s\n", dates[static_cast<std::size_t>(t)].c_str(), i + 1,
                    value ? value : number);
      rows.push_back(row);
    }
  std::string ordered = "date,asset,return\n";
  for (const auto& r : rows) ordered += r;
  // Assets keep the order of first appearance: keep the first nine rows in front, so that
  // both files list the assets in the same order and the panels compare cell by cell.
  std::vector<std::string> rest(rows.begin() + 9, rows.end());
  std::mt19937 rng(20261202);
  std::shuffle(rest.begin(), rest.end(), rng);
  std::string shuffled = "date,asset,return\n";
  for (int i = 8; i >= 0; --i) rest.insert(rest.begin(), rows[static_cast<std::size_t>(i)]);
  for (const auto& r : rest) shuffled += r;
  ASSERT_NE(ordered, shuffled);

  const ReturnsFile a = read_returns_file(write("ordered.csv", ordered), {});
  const ReturnsFile b = read_returns_file(write("shuffled.csv", shuffled), {});
  expect_same_panel(a.panel, b.panel);
  EXPECT_EQ(b.panel.periods(), 40);
  EXPECT_EQ(b.panel.width(), 9);
  EXPECT_EQ(b.data_rows, rows.size());
  EXPECT_EQ(a.values_present, b.values_present);
}

TEST_F(ReturnsCsv, ByteOrderMarkAndCrLf) {
  std::string crlf = "\xEF\xBB\xBF";
  for (const char* c = kWide; *c; ++c) {
    if (*c == '\n') crlf += '\r';
    crlf += *c;
  }
  expect_same_panel(read_returns_csv(write("wide.csv", kWide)), read_returns_csv(write("crlf.csv", crlf)));
}

TEST_F(ReturnsCsv, QuotesCommentsBlankLinesAndSpaces) {
  const ReturnsPanel p = read_returns_csv(write("quoted.csv",
                                                "# provenance: made by hand\n"
                                                "\n"
                                                "# a second comment, with \"quotes\n"
                                                "date,\"Fund, Class A\",\"The \"\"Best\"\" Co\", Plain \n"
                                                "\"2024-01-02\",\"0.5\", +0.25 ,\"\"\n"
                                                "\n"
                                                "2024-01-03,\"-0.5\",2,3\n"));
  EXPECT_EQ(p.assets, (std::vector<std::string>{"Fund, Class A", "The \"Best\" Co", "Plain"}));
  EXPECT_EQ(p.values(0, 0), 0.5);
  EXPECT_EQ(p.values(0, 1), 0.25);
  EXPECT_TRUE(std::isnan(p.values(0, 2)));
  EXPECT_EQ(p.values(1, 0), -0.5);
  EXPECT_EQ(p.periods(), 2);
}

TEST_F(ReturnsCsv, QuotedNameSpanningLinesIsRefused) {
  // A quoted field may span lines (RFC 4180), but a line break is a control character,
  // which no asset name may hold (identifier_rule.h): named at the record's first line.
  expect_error("date,\"two\nline name\",B\n2024-01-02,1,2\n2024-01-03,1,x\n", 1, "column 2",
               "the asset name 'two\\x0Aline name' holds a control character (U+000A) at position 4");
}

TEST_F(ReturnsCsv, NumbersAreParsedExactly) {
  // fast_float rounds correctly: these must equal the compiler's own literals bit for bit.
  const ReturnsPanel p = read_returns_csv(write("exact.csv",
                                                "date,A,B,C\n"
                                                "2024-01-02,0.1,-0.009326550003611267,2.2250738585072014e-308\n"));
  EXPECT_EQ(p.values(0, 0), 0.1);
  EXPECT_EQ(p.values(0, 1), -0.009326550003611267);
  EXPECT_EQ(p.values(0, 2), 2.2250738585072014e-308);
}

TEST_F(ReturnsCsv, ReturnsUpToTheLimitsAreKept) {
  // The limits themselves: +1000 % is kept, just above -100 % is kept.
  const ReturnsPanel p = read_returns_csv(write("edge.csv", "date,A,B\n2024-01-02,10,-0.999999\n"));
  EXPECT_EQ(p.values(0, 0), 10);
  EXPECT_EQ(p.values(0, 1), -0.999999);
}

TEST_F(ReturnsCsv, FileFieldsCountRowsAndValues) {
  const ReturnsFile w = read_returns_file(write("wide.csv", kWide), {});
  EXPECT_EQ(w.layout, "wide");
  EXPECT_EQ(w.data_rows, 3u);
  EXPECT_EQ(w.values_present, 6u);  // 9 cells, 3 gaps
  const ReturnsFile l = read_returns_file(write("long.csv", kLong), {});
  EXPECT_EQ(l.layout, "long");
  EXPECT_EQ(l.data_rows, 8u);
  EXPECT_EQ(l.values_present, 6u);  // 8 rows, 2 of them NA or empty
  expect_same_panel(l.panel, read_returns_csv(write("again.csv", kLong)));
}

// --- prices -------------------------------------------------------------------------------

// ZQ-0002 has no price on 01-03: its returns on 01-03 and 01-04 are missing, then resume.
const char* kPricesWide =
    "date,ZQ-0001,ZQ-0002\n"
    "2024-01-02,100,50\n"
    "2024-01-03,110,\n"
    "2024-01-04,99,55\n"
    "2024-01-05,99,60.5\n";

TEST_F(ReturnsCsv, PricesToSimpleReturns) {
  const ReturnsFile f =
      read_returns_file(write("prices.csv", kPricesWide), {ValuesInFile::prices_to_simple_returns});
  const ReturnsPanel& p = f.panel;
  // The first date only gives the previous prices for the second.
  EXPECT_EQ(factorwatch::testing::iso_texts(p.dates), (std::vector<std::string>{"2024-01-03", "2024-01-04", "2024-01-05"}));
  EXPECT_EQ(p.assets, (std::vector<std::string>{"ZQ-0001", "ZQ-0002"}));
  EXPECT_EQ(p.values(0, 0), 110.0 / 100.0 - 1);
  EXPECT_NEAR(p.values(0, 0), 0.10, 1e-15);
  EXPECT_NEAR(p.values(1, 0), -0.10, 1e-15);
  EXPECT_EQ(p.values(2, 0), 0.0);
  EXPECT_TRUE(std::isnan(p.values(0, 1)));  // no price on 01-03
  EXPECT_TRUE(std::isnan(p.values(1, 1)));  // no previous price for 01-04
  EXPECT_EQ(p.values(2, 1), 60.5 / 55.0 - 1);  // resumes
  EXPECT_NEAR(p.values(2, 1), 0.10, 1e-15);
  EXPECT_EQ(f.data_rows, 4u);
  EXPECT_EQ(f.values_present, 4u);
}

TEST_F(ReturnsCsv, PricesToLogReturns) {
  const ReturnsPanel p =
      read_returns_file(write("prices.csv", kPricesWide), {ValuesInFile::prices_to_log_returns}).panel;
  ASSERT_EQ(p.periods(), 3);
  EXPECT_EQ(p.values(0, 0), std::log(110.0 / 100.0));
  EXPECT_NEAR(p.values(0, 0), 0.09531017980432486, 1e-15);  // ln 1.1
  EXPECT_NEAR(p.values(1, 0), -0.10536051565782628, 1e-15);  // ln 0.9
  EXPECT_EQ(p.values(2, 0), 0.0);
  EXPECT_TRUE(std::isnan(p.values(0, 1)));
  EXPECT_TRUE(std::isnan(p.values(1, 1)));
  EXPECT_NEAR(p.values(2, 1), 0.09531017980432486, 1e-15);
}

TEST_F(ReturnsCsv, LongPricesInAnyOrderGiveTheSameReturns) {
  // The previous date is the file's previous date, whichever row it came on; ZQ-0002's
  // gap is a missing row here.
  const ReturnsPanel lng = read_returns_file(write("prices_long.csv",
                                                   "asset,date,return\n"
                                                   "ZQ-0002,2024-01-05,60.5\n"
                                                   "ZQ-0001,2024-01-03,110\n"
                                                   "ZQ-0001,2024-01-02,100\n"
                                                   "ZQ-0002,2024-01-02,50\n"
                                                   "ZQ-0001,2024-01-05,99\n"
                                                   "ZQ-0002,2024-01-04,55\n"
                                                   "ZQ-0001,2024-01-04,99\n"),
                                             {ValuesInFile::prices_to_simple_returns})
                               .panel;
  const ReturnsPanel wide =
      read_returns_file(write("prices.csv", kPricesWide), {ValuesInFile::prices_to_simple_returns}).panel;
  ASSERT_EQ(lng.assets, (std::vector<std::string>{"ZQ-0002", "ZQ-0001"}));
  ASSERT_EQ(lng.dates, wide.dates);
  for (Eigen::Index t = 0; t < 3; ++t)
    for (Eigen::Index j = 0; j < 2; ++j) {
      const double a = lng.values(t, 1 - j), b = wide.values(t, j);
      EXPECT_TRUE(a == b || (std::isnan(a) && std::isnan(b))) << t << "," << j;
    }
}

TEST_F(ReturnsCsv, PricesAreNotJudgedAsReturns) {
  // Prices far above 10, and well over 100 of them: neither the +1000 % limit nor the
  // percent rule reads them as returns.
  std::string text = "date,ZQ-0001,ZQ-0002,ZQ-0003,ZQ-0004,ZQ-0005\n";
  const auto dates = factorwatch::testing::iso_texts(factorwatch::testing::business_dates(30));
  for (int t = 0; t < 30; ++t) {
    char row[128];
    std::snprintf(row, sizeof row, "%s,%d,%d,%d,%d,%d\n", dates[static_cast<std::size_t>(t)].c_str(), 250 + t,
                  251, 1000 - t, 80, 99 + t % 2);
    text += row;
  }
  const ReturnsFile f =
      read_returns_file(write("prices.csv", text), {ValuesInFile::prices_to_simple_returns});
  EXPECT_EQ(f.panel.periods(), 29);
  EXPECT_EQ(f.values_present, 29u * 5u);
}

TEST_F(ReturnsCsv, ErrorBadPrices) {
  const auto simple = ValuesInFile::prices_to_simple_returns, log = ValuesInFile::prices_to_log_returns;
  expect_error("date,A,B\n2024-01-02,10,0\n2024-01-03,10,1\n", 2, "B",
               "price '0' is not above 0 (prices must be positive)", simple);
  expect_error("date,asset,return\n2024-01-02,A,10\n2024-01-03,A,-3\n", 3, "return",
               "price '-3' is not above 0", log);
  expect_error("# one date\ndate,A,B\n2024-01-02,10,20\n", 3, "date",
               "a price file needs at least two dates", simple);
  expect_error("date,asset,return\n2024-01-02,A,10\n2024-01-02,B,20\n", 2, "date",
               "include the previous date's prices in each file", log);
  // A price eleven times and more the previous one: the later price's line and asset.
  expect_error("date,A,B\n2024-01-02,10,20\n2024-01-03,10,20\n2024-01-04,10,240\n", 4, "B",
               "price 240 of 'B' on 2024-01-04 after 20 on 2024-01-03 (line 3) is a return of +1100 %, "
               "above the +1000 % limit",
               simple);
  expect_error("date,A,B\n2024-01-02,10,20\n2024-01-03,10,20\n2024-01-04,10,240\n", 4, "B", "+1100 %", log);
  // Exactly eleven times is +1000 %, kept.
  EXPECT_NO_THROW(read_returns_file(write("x11.csv", "date,A\n2024-01-02,10\n2024-01-03,110\n"), {simple}));
  // In a long file the line is found again after the whole file was read.
  expect_error("date,asset,return\n2024-01-03,A,10\n2024-01-02,B,1\n\n2024-01-02,A,10\n2024-01-03,B,12\n", 6,
               "return", "price 12 of 'B' on 2024-01-03 after 1 on 2024-01-02 (line 3)", simple);
}

// --- the percent rule: a file whose median |return| is above 0.25 -------------------

// A wide file of `rows` dates x 5 assets where `large` of the cells (in file order) are
// 0.3 and the others 0.01.
std::string percent_like(int rows, int large) {
  std::string text = "date,ZQ-0001,ZQ-0002,ZQ-0003,ZQ-0004,ZQ-0005\n";
  int cell = 0;
  const auto dates = factorwatch::testing::iso_texts(factorwatch::testing::business_dates(rows));
  for (int t = 0; t < rows; ++t) {
    text += dates[static_cast<std::size_t>(t)];
    for (int j = 0; j < 5; ++j) text += (cell++ < large) ? ",-0.3" : ",0.01";
    text += "\n";
  }
  return text;
}

TEST_F(ReturnsCsv, PercentRule) {
  // 20 dates x 5 = 100 values; 51 large ones make the lower median 0.3.
  expect_error(percent_like(20, 51), 2, "ZQ-0001", "the file looks like percent");
  expect_error(percent_like(20, 51), 2, "ZQ-0001", "median absolute return of its 100 values is 0.3");
  // Exactly half large: the lower median is 0.01, the file is kept.
  EXPECT_NO_THROW(read_returns_csv(write("half.csv", percent_like(20, 50))));
  // Fewer than 100 values: too few to judge, kept even if all are large.
  EXPECT_NO_THROW(read_returns_csv(write("few.csv", percent_like(19, 95))));
  // The first large value in file order, in a long file whose rows are not in date order.
  std::string lng = "date,asset,return\n2023-02-01,ZQ-0009,0.01\n2023-02-01,ZQ-0008,2.5\n";
  const auto dates = factorwatch::testing::iso_texts(factorwatch::testing::business_dates(28));
  for (int t = 0; t < 100; ++t) {
    char row[64];
    std::snprintf(row, sizeof row, "%s,ZQ-%04d,3\n", dates[static_cast<std::size_t>(t % 28)].c_str(), 1 + t / 28);
    lng += row;
  }
  expect_error(lng, 3, "return", "looks like percent");
}

// --- errors: every one names file, line and column --------------------------------------

TEST_F(ReturnsCsv, ErrorNotANumber) {
  expect_error("date,A,B\n2024-01-02,0.1,0.2\n2024-01-03,0.1,1.5%\n", 3, "B", "'1.5%' is not a number");
  expect_error("date,A,B\n2024-01-02,0.1,0.2 0.3\n", 2, "B", "is not a number");
  expect_error("date,asset,return\n2024-01-02,A,abc\n", 2, "return", "'abc' is not a number");
}

TEST_F(ReturnsCsv, ErrorNotFinite) {
  // NaN is no longer a gap: it is what a failed computation leaves behind.
  for (const char* cell : {"nan", "NaN", "NAN", "-nan", "inf", "-inf", "+Inf", "Infinity", "-INFINITY"})
    expect_error(std::string("date,A,B\n2024-01-02,0.1,0.2\n2024-01-03,") + cell + ",0.2\n", 3, "A",
                 "' is not a finite number (a missing value is an empty cell or NA)");
  expect_error("date,A,B\n2024-01-02,0.1,-1e999\n", 2, "B", "not a finite number");
  expect_error("date,asset,return\n2024-01-02,A,NaN\n", 2, "return", "'NaN' is not a finite number");
  expect_error("date,A\n2024-01-02,NaN\n", 2, "A", "a missing value is an empty cell",
               ValuesInFile::prices_to_simple_returns);
}

TEST_F(ReturnsCsv, ErrorImplausibleReturns) {
  expect_error("date,A,B\n2024-01-02,0.1,-1\n", 2, "B",
               "return '-1' is at or below -1 (-100 %): a price cannot fall to zero or below");
  expect_error("date,asset,return\n2024-01-02,A,0.1\n2024-01-02,B,-1.5\n", 3, "return", "at or below -1");
  expect_error("date,A,B\n2024-01-02,0.1,0.2\n2024-01-03,10.5,0.2\n", 3, "A",
               "return '10.5' is above 10 (1000 % in one period): if the file is in percent, convert "
               "percent to fractions (5 % is 0.05)");
  expect_error("date,asset,return\n2024-01-02,A,12\n", 2, "return", "above 10");
}

TEST_F(ReturnsCsv, ErrorBadDates) {
  expect_error("date,A\n2024-01-02,1\n2023-02-29,1\n", 3, "date", "'2023-02-29' is not a calendar date");
  expect_error("date,A\n2024-13-01,1\n", 2, "date", "not a calendar date");
  expect_error("date,A\n24-01-01,1\n", 2, "date", "yyyy-mm-dd");
  expect_error("date,A\n2024/01/02,1\n", 2, "date", "yyyy-mm-dd");
  expect_error("Date,asset,return\n2024-1-2,A,1\n", 2, "Date", "yyyy-mm-dd");
  // 2024 is a leap year, 1900 is not, 2000 is.
  EXPECT_NO_THROW(read_returns_csv(write("leap.csv", "date,A\n2000-02-29,1\n2024-02-29,1\n")));
  expect_error("date,A\n1900-02-29,1\n", 2, "date", "not a calendar date");
}

// --- the calendar: weekdays unless declared, and no date in the future ---------------------
// Weekdays checked against Python's datetime.date.weekday() (from memory: 1999-01-16 is a
// Saturday, 1999-01-17 a Sunday; confirmed with python3 -c "import datetime; ...").

TEST_F(ReturnsCsv, WeekendDatesAreRefusedInBothLayouts) {
  expect_error("date,A\n1999-01-15,0.1\n1999-01-16,0.1\n", 3, "date",
               "'1999-01-16' is a Saturday: a returns file holds weekdays only, unless it declares a calendar "
               "with weekends by the line '# calendar: all days' before the header");
  expect_error("date,asset,return\n1999-01-18,A,0.1\n1999-01-17,A,0.1\n", 3, "date", "'1999-01-17' is a Sunday");
  // Prices too: a price on a Saturday is as stray as a return.
  expect_error("date,A\n1999-01-15,10\n1999-01-16,11\n", 3, "date", "is a Saturday",
               ValuesInFile::prices_to_simple_returns);
}

TEST_F(ReturnsCsv, ACalendarWithWeekendsIsDeclaredBeforeTheHeader) {
  const std::string days = "date,A\n1999-01-15,0.1\n1999-01-16,0.2\n1999-01-17,0.3\n1999-01-18,0.4\n";
  const ReturnsFile all = read_returns_file(write("all.csv", "# exchange: fictional\n#  Calendar :  All Days \n" + days), {});
  EXPECT_TRUE(all.weekends);
  EXPECT_EQ(all.panel.periods(), 4);
  EXPECT_EQ(all.panel.values(1, 0), 0.2);
  const ReturnsFile lng = read_returns_file(
      write("long.csv", "# calendar: all days\ndate,asset,return\n1999-01-17,A,0.3\n1999-01-15,A,0.1\n"), {});
  EXPECT_EQ(factorwatch::testing::iso_texts(lng.panel.dates), (std::vector<std::string>{"1999-01-15", "1999-01-17"}));
  // The default stated, and prose that merely starts with the word: weekdays.
  const ReturnsFile plain = read_returns_file(write("plain.csv", "# calendar: weekdays\ndate,A\n1999-01-15,0.1\n"), {});
  EXPECT_FALSE(plain.weekends);
  expect_error("# calendar: weekdays\ndate,A\n1999-01-16,0.1\n", 3, "date", "is a Saturday");
  expect_error("# calendar days of the exchange follow\ndate,A\n1999-01-16,0.1\n", 3, "date", "is a Saturday");
  // A declaration after the header is a comment among the data, refused as before.
  expect_error("date,A\n# calendar: all days\n1999-01-16,0.1\n", 2, "", "comment");
  expect_error("# calendar: 24/7\ndate,A\n1999-01-15,0.1\n", 1, "", "unknown calendar '24/7'");
  expect_error("# calendar:\ndate,A\n1999-01-15,0.1\n", 1, "", "unknown calendar ''");
}

TEST_F(ReturnsCsv, DatesAfterTheLatestDateAreRefused) {
  factorwatch::storage::ReturnsReadOptions options;
  options.latest_date = factorwatch::testing::day("2024-01-05");
  const std::string path = write("late.csv", "date,A\n2024-01-04,0.1\n2024-01-05,0.1\n");
  EXPECT_EQ(read_returns_file(path, options).panel.periods(), 2);  // the latest date itself is kept
  options.latest_date = factorwatch::testing::day("2024-01-04");
  try {
    read_returns_file(path, options);
    ADD_FAILURE() << "accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.line(), 3u);
    EXPECT_EQ(e.field(), "date");
    EXPECT_NE(std::string(e.what()).find("'2024-01-05' is in the future: no day after 2024-01-04 has begun anywhere "
                                         "on earth yet"),
              std::string::npos)
        << e.what();
  }
  // By default the limit is the date in UTC+14, the earliest time zone: today (UTC) is
  // always accepted, a date two days on never is.
  const auto today = factorwatch::storage::utc_today();
  EXPECT_GE(factorwatch::storage::latest_date_begun(), today);
  EXPECT_LE(factorwatch::storage::latest_date_begun().days(), today.days() + 1);
  const auto later = factorwatch::engine::Date::from_days(today.days() + 2);
  const std::string header = "# calendar: all days\ndate,A\n";
  EXPECT_NO_THROW(read_returns_file(write("today.csv", header + today.iso() + ",0.1\n"), {}));
  expect_error(header + today.iso() + ",0.1\n" + later.iso() + ",0.1\n", 4, "date", "is in the future");
}

TEST_F(ReturnsCsv, ErrorDuplicateDateWide) {
  expect_error("date,A\n2024-01-02,1\n2024-01-03,1\n2024-01-02,2\n", 4, "date",
               "date 2024-01-02 appears twice (lines 2 and 4)");
}

TEST_F(ReturnsCsv, ErrorWideDatesMustAscend) {
  expect_error("date,A\n2024-01-02,0.1\n2024-01-05,0.1\n\n2024-01-03,0.1\n", 5, "date",
               "dates must ascend: 2024-01-03 on line 5 is earlier than 2024-01-05 on line 3");
  // A repeat right after itself is still reported as a repeat.
  expect_error("date,A\n2024-01-02,0.1\n2024-01-02,0.1\n", 3, "date",
               "date 2024-01-02 appears twice (lines 2 and 3)");
}

TEST_F(ReturnsCsv, ErrorDuplicateDateAndAssetLong) {
  expect_error("date,asset,return\n2024-01-02,A,1\n2024-01-02,B,1\n\n2024-01-02,A,2\n", 5, "asset",
               "asset 'A' on 2024-01-02 appears twice (lines 2 and 5)");
}

TEST_F(ReturnsCsv, ErrorDuplicateAssetNameWide) {
  expect_error("date,A,B,A\n2024-01-02,1,2,3\n", 1, "A", "appears twice (columns 2 and 4)");
}

TEST_F(ReturnsCsv, ErrorEmptyAssetName) {
  expect_error("date,A,,C\n2024-01-02,1,2,3\n", 1, "column 3", "asset name is empty");
  expect_error("date,asset,return\n2024-01-02,,0.1\n", 2, "asset", "asset name is empty");
}

TEST_F(ReturnsCsv, ErrorWrongNumberOfFields) {
  expect_error("date,A,B,C\n2024-01-02,1,2\n", 2, "C", "missing: the row has 3 fields, the header 4");
  expect_error("date,A,B\n2024-01-02,1,2,3\n", 2, "B", "extra fields after this column");
  expect_error("date,asset,return\n2024-01-02,A\n", 2, "return", "missing");
}

TEST_F(ReturnsCsv, ErrorLayoutHeaders) {
  expect_error("date,asset,return,currency\n2024-01-02,A,1,EUR\n", 1, "currency", "unexpected column");
  expect_error("day,asset,return\n2024-01-02,A,1\n", 1, "date", "column missing");
  expect_error("day,A,B\n2024-01-02,1,2\n", 1, "day", "unknown layout: the first column must be 'date'");
  expect_error("day,A,B\n2024-01-02,1,2\n", 1, "day", "long, header date,asset,return, or wide");
  // One of 'asset' and 'return' without the other: a long file with a column misnamed.
  expect_error("date,asset,value\n2024-01-02,A,1\n", 1, "return", "column missing");
  expect_error("date,ticker,return\n2024-01-02,A,1\n", 1, "asset", "column missing");
  expect_error("date\n2024-01-02\n", 1, "date", "no asset columns");
}

TEST_F(ReturnsCsv, ErrorCommentAmongTheData) {
  // '#' lines are comments before the header only; among the data they are an error of
  // their own rather than a row with the wrong number of fields.
  expect_error("# fine here\ndate,A,B\n2024-01-02,0.1,0.2\n  # revised below\n2024-01-03,0.1,0.2\n", 4, "",
               "a comment line among the data: lines starting with '#' are allowed only before the header");
  // A quoted first field starting with '#' is data.
  const ReturnsPanel p =
      read_returns_csv(write("hash.csv", "asset,date,return\n\"#1 Fund\",2024-01-02,0.1\n"));
  EXPECT_EQ(p.assets, (std::vector<std::string>{"#1 Fund"}));
}

TEST_F(ReturnsCsv, ErrorQuotes) {
  expect_error("date,A,B\n2024-01-02,\"0.1,0.2\n", 2, "A", "quote opened here is never closed");
  expect_error("date,A,B\n2024-01-02,\"0.1\"x,0.2\n", 2, "A", "unexpected text after the closing quote");
}

TEST_F(ReturnsCsv, ErrorInvalidUtf8Names) {
  // "Caf\xE9" is Latin-1; a lone continuation byte, an overlong '/', a surrogate.
  expect_error("date,ZQ-0001,Caf\xE9\n2024-01-02,1,2\n", 1, "column 3",
               "the column name is not valid UTF-8 (byte 0xE9 at position 4)");
  expect_error("date,asset,return\n2024-01-02,ZQ-0001,0.1\n2024-01-02,Z\x80Q,0.1\n", 3, "asset",
               "the asset name is not valid UTF-8 (byte 0x80 at position 2)");
  expect_error("date,\xC0\xAF\n2024-01-02,1\n", 1, "column 2", "not valid UTF-8 (byte 0xC0");
  expect_error("date,\xED\xA0\x80\n2024-01-02,1\n", 1, "column 2", "not valid UTF-8 (byte 0xED");
  // Well-formed names in other scripts are fine, up to four bytes a character.
  const ReturnsPanel p = read_returns_csv(
      write("utf8.csv", "date,ZQ-Grün Fonds,ZQ-東,\xF0\x9F\x93\x88\n2024-01-02,0.1,0.2,0.3\n"));
  EXPECT_EQ(p.assets[1], "ZQ-東");
  // A bad cell's bytes are escaped in the message, which stays valid UTF-8.
  expect_error("date,A\n2024-01-02,0.\xFF\n", 2, "A", "'0.\\xFF' is not a number");
}

TEST_F(ReturnsCsv, ErrorsWithoutALine) {
  const std::string missing = (dir_ / "nope.csv").string();
  try {
    read_returns_csv(missing);
    ADD_FAILURE();
  } catch (const InputError& e) {
    EXPECT_EQ(std::string(e.what()).rfind(missing + ": cannot open", 0), 0u) << e.what();
    EXPECT_EQ(e.line(), 0u);
  }
  for (const std::string content : {"", "\xEF\xBB\xBF", "\n \n\t\r\n", "# only a comment\n\n"}) {
    try {
      read_returns_csv(write("empty.csv", content));
      ADD_FAILURE();
    } catch (const InputError& e) {
      EXPECT_NE(std::string(e.what()).find("the file is empty"), std::string::npos) << e.what();
      EXPECT_NE(std::string(e.what()).find("no header row"), std::string::npos) << e.what();
      EXPECT_EQ(e.line(), 0u);
    }
  }
  try {
    read_returns_csv(write("header_only.csv", "# c\ndate,A\n"));
    ADD_FAILURE();
  } catch (const InputError& e) {
    EXPECT_EQ(e.line(), 2u);
    EXPECT_NE(std::string(e.what()).find("no data rows"), std::string::npos) << e.what();
  }
}

// --- speed ---------------------------------------------------------------------------------

// The demo universe's size: 640 assets x 1565 dates, wide and long, read alike.
// (Reading speed is measured in bench/, never asserted in a unit test.)
TEST_F(ReturnsCsv, ReadsTheWorkingSizeInBothLayoutsAlike) {
  const int assets = 640, dates = 1565;
  std::string wide = "date", lng = "date,asset,return\n";
  for (int j = 0; j < assets; ++j) wide += ",A" + std::to_string(1000 + j);
  wide += "\n";
  char cell[64];
  // Weekdays from 2015: 1565 of them end in 2020, before today.
  const auto calendar = factorwatch::testing::iso_texts(factorwatch::testing::business_dates(dates, "2015-01-05"));
  for (int t = 0; t < dates; ++t) {
    const std::string& date = calendar[static_cast<std::size_t>(t)];
    wide += date;
    for (int j = 0; j < assets; ++j) {
      const double r = 0.01 * std::sin(0.37 * t + 1.3 * j) + 1e-4 * ((t * 7919 + j * 104729) % 97);
      std::snprintf(cell, sizeof cell, "%.10g", r);
      wide += ",";
      wide += cell;
      lng += date;
      lng += ",A" + std::to_string(1000 + j) + "," + cell + "\n";
    }
    wide += "\n";
  }
  const std::string wide_path = write("wide.csv", wide), long_path = write("long.csv", lng);

  const ReturnsPanel w = read_returns_csv(wide_path), l = read_returns_csv(long_path);
  ASSERT_EQ(w.periods(), dates);
  ASSERT_EQ(w.width(), assets);
  expect_same_panel(w, l);
}

// --- reference file -----------------------------------------------------------------------

// tests/reference/eustock_returns.csv: R 4.2.2, r <- diff(log(datasets::EuStockMarkets)),
// written with sprintf("%.17g") by make_eustock.R (dates are positional labels).
TEST_F(ReturnsCsv, ReadsEuStockReferenceFile) {
  const ReturnsPanel p = read_returns_csv(FACTORWATCH_REFERENCE_DIR "/eustock_returns.csv");
  ASSERT_EQ(p.periods(), 1859);
  ASSERT_EQ(p.width(), 4);
  EXPECT_EQ(p.assets, (std::vector<std::string>{"DAX", "SMI", "CAC", "FTSE"}));
  EXPECT_EQ(p.dates.front().iso(), "1991-07-02");
  EXPECT_EQ(p.dates.back().iso(), "1998-08-14");
  // First and last rows as R printed them (17 significant digits round-trip exactly).
  EXPECT_EQ(p.values(0, 0), -0.009326550003611267);
  EXPECT_EQ(p.values(0, 3), 0.0067702856590727833);
  EXPECT_EQ(p.values(1858, 0), 0.021922152290178687);
  EXPECT_EQ(p.values(1858, 3), 0.010226262594358104);
  EXPECT_FALSE(p.values.array().isNaN().any());

  // Every cell read right: the covariance (denominator n) of what we read has the
  // eigenvalues numpy found on the same file.
  // Source: tests/reference/eustock_pca_reference.csv, Debian python3 numpy 1.24.2,
  // numpy.linalg.eigh(numpy.cov(r, rowvar=False, ddof=0)).
  const Eigen::MatrixXd x = p.values;
  const Eigen::MatrixXd centred = x.rowwise() - x.colwise().mean();
  const Eigen::MatrixXd cov = centred.transpose() * centred / static_cast<double>(x.rows());
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eig(cov);
  const double numpy_ddof0[4] = {0.0002843724957437839, 3.87908215636752e-05, 2.7951140818466524e-05,
                                 2.5358955730346867e-05};
  for (int i = 0; i < 4; ++i)
    EXPECT_NEAR(eig.eigenvalues()(3 - i), numpy_ddof0[i], 1e-10 * numpy_ddof0[i]) << i;
}

}  // namespace
