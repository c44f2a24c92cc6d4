// Reading a given covariance or correlation matrix (storage::read_covariance_csv): both
// header shapes, symmetry, every error path, and Harman's 24-test matrix written by R.
#include <gtest/gtest.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <stdexcept>
#include <string>

#include "factorwatch/storage/covariance_csv.h"
#include "factorwatch/storage/input_error.h"

namespace fs = std::filesystem;
using factorwatch::engine::CovarianceInput;
using factorwatch::storage::InputError;
using factorwatch::storage::read_covariance_csv;

namespace {

class CovarianceCsv : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    dir_ = fs::temp_directory_path() /
           ("factorwatch_covariance_" + std::to_string(::getpid()) + "_" + info->name());
    fs::remove_all(dir_);
    fs::create_directories(dir_);
  }
  void TearDown() override { fs::remove_all(dir_); }

  std::string write(const std::string& content) {
    const std::string path = (dir_ / ("m" + std::to_string(count_++) + ".csv")).string();
    std::ofstream(path, std::ios::binary) << content;
    return path;
  }

  // Rejected with "PATH:LINE: field 'FIELD': ..." (or "PATH:LINE: ..." when field is
  // empty) mentioning `words`.
  void expect_error(const std::string& content, std::size_t line, const std::string& field,
                    const std::string& words) {
    const std::string path = write(content);
    try {
      read_covariance_csv(path, 100);
      ADD_FAILURE() << "accepted:\n" << content;
    } catch (const InputError& e) {
      std::string prefix = path + ":" + std::to_string(line) + ": ";
      if (!field.empty()) prefix += "field '" + field + "': ";
      EXPECT_EQ(std::string(e.what()).rfind(prefix, 0), 0u) << e.what() << "\nwanted prefix " << prefix;
      EXPECT_EQ(e.field(), field) << e.what();
      EXPECT_NE(std::string(e.what()).find(words), std::string::npos) << e.what();
    }
  }

  fs::path dir_;
  int count_ = 0;
};

// A bare matrix under a header of names (no row names) is read by position.
TEST_F(CovarianceCsv, BareRowsUnderAHeaderOfNames) {
  const CovarianceInput in = read_covariance_csv(write("A,B,C\n4,1,0.5\n1,9,2\n0.5,2,16\n"), 60);
  ASSERT_EQ(in.assets, (std::vector<std::string>{"A", "B", "C"}));
  EXPECT_EQ(in.matrix(1, 1), 9);
  EXPECT_EQ(in.matrix(2, 0), 0.5);
  EXPECT_EQ(in.observations, 60);
  expect_error("A,B\n4,1\n1\n", 3, "B", "missing");
  expect_error("A,B\n4,1\n1,9,3\n", 3, "B", "extra fields");
}

TEST_F(CovarianceCsv, HeaderWithCornerCell) {
  const CovarianceInput in = read_covariance_csv(write(",A,B\nA,4,1\nB,1,9\n"), 250);
  EXPECT_EQ(in.assets, (std::vector<std::string>{"A", "B"}));
  EXPECT_EQ(in.observations, 250);
  EXPECT_EQ(in.matrix(0, 0), 4);
  EXPECT_EQ(in.matrix(0, 1), 1);
  EXPECT_EQ(in.matrix(1, 1), 9);
}

TEST_F(CovarianceCsv, HeaderWithoutCornerCellQuotesAndCrLf) {
  const CovarianceInput in =
      read_covariance_csv(write("\xEF\xBB\xBF# from a spreadsheet\r\n\"A, Inc\",B\r\n\"A, Inc\",4,1\r\nB,1,9\r\n"), 50);
  EXPECT_EQ(in.assets, (std::vector<std::string>{"A, Inc", "B"}));
  EXPECT_EQ(in.matrix(1, 0), 1);
}

TEST_F(CovarianceCsv, NearlySymmetricIsAveraged) {
  // A difference of 5e-11 relative to the entry's scale sqrt(4 * 9) = 6 passes and is averaged.
  const CovarianceInput in = read_covariance_csv(write(",A,B\nA,4,1.0000000003\nB,1,9\n"), 50);
  EXPECT_EQ(in.matrix(0, 1), in.matrix(1, 0));
  EXPECT_DOUBLE_EQ(in.matrix(0, 1), 1.00000000015);
}

TEST_F(CovarianceCsv, ErrorNotSymmetricNamesThePair) {
  expect_error(",A,B,C\nA,1,0.5,0.2\nB,0.5,1,0.3\nC,0.2,0.31,1\n", 3, "C",
               "not symmetric: (B, C) = 0.3 but (C, B) = 0.31 on line 4");
}

TEST_F(CovarianceCsv, ErrorRowNameMismatch) {
  expect_error("name,A,B\nA,1,0.5\nC,0.5,1\n", 3, "name", "row name 'C' does not match the header's 'B'");
  expect_error(",A,B\nB,1,0.5\nA,0.5,1\n", 2, "(row names)", "does not match");
}

TEST_F(CovarianceCsv, ErrorBadCells) {
  expect_error(",A,B\nA,1,x\nB,0.5,1\n", 2, "B", "'x' is not a number");
  expect_error(",A,B\nA,1,NA\nB,0.5,1\n", 2, "B", "missing value");
  expect_error(",A,B\nA,1,0.5\nB,0.5,\n", 3, "B", "missing value");
  expect_error(",A,B\nA,1,0.5\nB,0.5,inf\n", 3, "B", "not a finite number");
  expect_error(",A,B\nA,-1,0.5\nB,0.5,1\n", 2, "A", "negative variance");
}

TEST_F(CovarianceCsv, ErrorShape) {
  expect_error(",A,B\nA,1,0.5\n", 2, "", "the row for 'B' is missing");
  expect_error(",A,B\nA,1,0.5\nB,0.5,1\nC,0,0\n", 4, "(row names)", "extra row 'C'");
  expect_error(",A,B\nA,1,0.5\nB,0.5\n", 3, "B", "missing");
  expect_error(",A,B\nA,1,0.5\nB,0.5,1,7\n", 3, "B", "extra fields");
  expect_error(",A,B\nA,1\nB,0.5,1\n", 2, "", "the row has 2 fields but the header has 3");
  expect_error(",A,A\nA,1,0.5\nA,0.5,1\n", 1, "A", "appears twice");
  expect_error(",A,B\n", 1, "", "no matrix rows");
}

TEST_F(CovarianceCsv, ObservationsMustBePositive) {
  const std::string path = write(",A\nA,1\n");
  EXPECT_THROW(read_covariance_csv(path, 0), std::invalid_argument);
  EXPECT_THROW(read_covariance_csv(path, -5), std::invalid_argument);
}

// tests/reference/harman74_cor.csv: R 4.2.2 datasets::Harman74.cor$cov (Holzinger and
// Swineford 1939, 24 tests, n.obs = 145), written with sprintf("%.17g") by make_harman74.R.
TEST_F(CovarianceCsv, ReadsHarman74ReferenceFile) {
  const CovarianceInput in = read_covariance_csv(FACTORWATCH_REFERENCE_DIR "/harman74_cor.csv", 145);
  ASSERT_EQ(in.assets.size(), 24u);
  ASSERT_EQ(in.matrix.rows(), 24);
  EXPECT_EQ(in.assets.front(), "VisualPerception");
  EXPECT_EQ(in.assets[5], "PargraphComprehension");  // R's own spelling
  EXPECT_EQ(in.assets.back(), "ArithmeticProblems");
  for (int i = 0; i < 24; ++i) EXPECT_EQ(in.matrix(i, i), 1.0);
  // Entries as R holds them (three decimals; R prints 0.318 and so on).
  EXPECT_EQ(in.matrix(0, 1), 0.318);  // VisualPerception, Cubes
  EXPECT_EQ(in.matrix(1, 0), 0.318);
  EXPECT_EQ(in.matrix(0, 2), 0.403);  // VisualPerception, PaperFormBoard
  EXPECT_EQ(in.matrix(2, 9), -0.075);  // PaperFormBoard, Addition
  EXPECT_EQ(in.observations, 145);
}

}  // namespace
