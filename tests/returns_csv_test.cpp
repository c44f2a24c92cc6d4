// Reading returns files (storage::read_returns_csv): layouts, gaps, order, CSV details,
// every error path, speed, and the EuStockMarkets reference file written by R.
#include <gtest/gtest.h>
#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/returns_csv.h"

namespace fs = std::filesystem;
using factorwatch::engine::ReturnsPanel;
using factorwatch::storage::InputError;
using factorwatch::storage::read_returns_csv;

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
                    const std::string& words) {
    const std::string path = write("bad.csv", content);
    try {
      read_returns_csv(path);
      ADD_FAILURE() << "accepted:\n" << content;
    } catch (const InputError& e) {
      const std::string prefix = path + ":" + std::to_string(line) + ": field '" + field + "': ";
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
    "2024-01-04,-1e-3,nan,1.5E-2\n";

// The same returns, one row per (date, asset), asset by asset, columns shuffled; the
// gaps are written once as an explicit NaN and once simply left out.
const char* kLong =
    "asset,return,date\n"
    "AAA,0.01,2024-01-02\n"
    "AAA,,2024-01-03\n"
    "AAA,-1e-3,2024-01-04\n"
    "BBB,-0.02,2024-01-02\n"
    "BBB,NaN,2024-01-03\n"
    "CCC,0.5,2024-01-02\n"
    "CCC,0.25,2024-01-03\n"
    "CCC,1.5E-2,2024-01-04\n";

TEST_F(ReturnsCsv, WideLayout) {
  const ReturnsPanel p = read_returns_csv(write("wide.csv", kWide));
  EXPECT_EQ(p.dates, (std::vector<std::string>{"2024-01-02", "2024-01-03", "2024-01-04"}));
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
  EXPECT_TRUE(std::isnan(p.values(2, 1)));  // nan
  EXPECT_FALSE(std::isnan(p.values(1, 2)));
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
                                                "2024-01-03,BBB,NaN\n"
                                                "2024-01-04,AAA,-1e-3\n"
                                                "2024-01-02,CCC,0.5\n"));
  expect_same_panel(read_returns_csv(write("wide.csv", kWide)), p);
}

TEST_F(ReturnsCsv, LongLayoutLeftOutRowIsAGap) {
  const ReturnsPanel p = read_returns_csv(write("long.csv", kLong));
  EXPECT_TRUE(std::isnan(p.values(2, 1)));  // BBB has no row for 2024-01-04
}

TEST_F(ReturnsCsv, RowsAreSortedByDate) {
  const ReturnsPanel sorted = read_returns_csv(write("wide.csv", kWide));
  const ReturnsPanel p = read_returns_csv(write("shuffled.csv",
                                                "date,AAA,BBB,CCC\n"
                                                "2024-01-04,-1e-3,nan,1.5E-2\n"
                                                "2024-01-02,0.01,-0.02,0.5\n"
                                                "2024-01-03,,NA,0.25\n"));
  expect_same_panel(sorted, p);
  // Long rows in date-descending order, with a year boundary (keys sort as numbers).
  const ReturnsPanel q = read_returns_csv(write("long.csv",
                                                "date,asset,return\n"
                                                "2024-01-01,X,3\n"
                                                "2023-12-31,X,2\n"
                                                "2023-02-28,X,1\n"));
  EXPECT_EQ(q.dates, (std::vector<std::string>{"2023-02-28", "2023-12-31", "2024-01-01"}));
  EXPECT_EQ(q.values(0, 0), 1);
  EXPECT_EQ(q.values(2, 0), 3);
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
                                                "2024-01-03,\"-1\",2,3\n"));
  EXPECT_EQ(p.assets, (std::vector<std::string>{"Fund, Class A", "The \"Best\" Co", "Plain"}));
  EXPECT_EQ(p.values(0, 0), 0.5);
  EXPECT_EQ(p.values(0, 1), 0.25);
  EXPECT_TRUE(std::isnan(p.values(0, 2)));
  EXPECT_EQ(p.values(1, 0), -1);
  EXPECT_EQ(p.periods(), 2);
}

TEST_F(ReturnsCsv, QuotedFieldMaySpanLines) {
  // Line numbers keep counting inside the quoted field: the bad cell is on line 4.
  expect_error("date,\"two\nline name\",B\n2024-01-02,1,2\n2024-01-03,1,x\n", 4, "B", "'x' is not a number");
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

TEST_F(ReturnsCsv, LargeReturnsAreKeptAsGiven) {
  // 1200 % is suspicious (a percent file?) but not impossible; the reader does not judge size.
  const ReturnsPanel p = read_returns_csv(write("big.csv", "date,A\n2024-01-02,12\n"));
  EXPECT_EQ(p.values(0, 0), 12);
}

// --- errors: every one names file, line and column --------------------------------------

TEST_F(ReturnsCsv, ErrorNotANumber) {
  expect_error("date,A,B\n2024-01-02,0.1,0.2\n2024-01-03,0.1,1.5%\n", 3, "B", "'1.5%' is not a number");
  expect_error("date,A,B\n2024-01-02,0.1,0.2 0.3\n", 2, "B", "is not a number");
  expect_error("date,asset,return\n2024-01-02,A,abc\n", 2, "return", "'abc' is not a number");
}

TEST_F(ReturnsCsv, ErrorNotFinite) {
  expect_error("date,A,B\n2024-01-02,inf,0.2\n", 2, "A", "not a finite number");
  expect_error("date,A,B\n2024-01-02,0.1,-1e999\n", 2, "B", "not a finite number");
}

TEST_F(ReturnsCsv, ErrorBadDates) {
  expect_error("date,A\n2024-01-02,1\n2023-02-29,1\n", 3, "date", "'2023-02-29' is not a calendar date");
  expect_error("date,A\n2024-13-01,1\n", 2, "date", "not a calendar date");
  expect_error("date,A\n24-01-01,1\n", 2, "date", "yyyy-mm-dd");
  expect_error("date,A\n2024/01/02,1\n", 2, "date", "yyyy-mm-dd");
  expect_error("Date,asset,return\n2024-1-2,A,1\n", 2, "Date", "yyyy-mm-dd");
  // 2024 is a leap year, 1900 is not, 2000 is.
  EXPECT_NO_THROW(read_returns_csv(write("leap.csv", "date,A\n2024-02-29,1\n2000-02-29,1\n")));
  expect_error("date,A\n1900-02-29,1\n", 2, "date", "not a calendar date");
}

TEST_F(ReturnsCsv, ErrorDuplicateDateWide) {
  expect_error("date,A\n2024-01-02,1\n2024-01-03,1\n2024-01-02,2\n", 4, "date",
               "date 2024-01-02 appears twice (lines 2 and 4)");
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
  expect_error("day,A,B\n2024-01-02,1,2\n", 1, "day", "the first column must be 'date'");
  expect_error("date\n2024-01-02\n", 1, "date", "no asset columns");
}

TEST_F(ReturnsCsv, ErrorQuotes) {
  expect_error("date,A,B\n2024-01-02,\"0.1,0.2\n", 2, "A", "quote opened here is never closed");
  expect_error("date,A,B\n2024-01-02,\"0.1\"x,0.2\n", 2, "A", "unexpected text after the closing quote");
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
  for (const char* content : {"", "# only a comment\n\n"}) {
    try {
      read_returns_csv(write("empty.csv", content));
      ADD_FAILURE();
    } catch (const InputError& e) {
      EXPECT_NE(std::string(e.what()).find("no header row"), std::string::npos) << e.what();
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
  for (int t = 0; t < dates; ++t) {
    // Plain consecutive calendar days from 2020-01-01 (labels only).
    const int day_number = t;
    int y = 2020, m = 1, d = 1 + day_number;
    static const int len[12] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
    for (;;) {
      const bool leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
      const int ml = len[m - 1] + (m == 2 && leap);
      if (d <= ml) break;
      d -= ml;
      if (++m == 13) m = 1, ++y;
    }
    char date[48];
    std::snprintf(date, sizeof date, "%04d-%02d-%02d", y, m, d);
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
  EXPECT_EQ(p.dates.front(), "1991-07-02");
  EXPECT_EQ(p.dates.back(), "1998-08-14");
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
