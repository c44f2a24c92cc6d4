// Empty matrices and vectors through the BLOB codec (storage/src/blob_codec.h). A refresh
// stores some (a window without a value of one kind): their data pointer is null, and the
// codec passed it to memcpy, undefined even for 0 bytes. The sanitizer build
// (deploy/run-sanitized-tests.sh) aborted `factorwatch refresh` on it; this test fails
// there on the old code and checks the round trip everywhere.
#include <gtest/gtest.h>

#include "blob_codec.h"

namespace fw = factorwatch::storage::detail;

TEST(BlobCodecEmpty, EmptyMatrixAndVectorRoundTrip) {
  const Eigen::MatrixXd none(0, 0);
  const std::string m = fw::encode_doubles(none);
  const Eigen::MatrixXd back = fw::decode_matrix(m.data(), m.size(), "m");
  EXPECT_EQ(back.rows(), 0);
  EXPECT_EQ(back.cols(), 0);
  const Eigen::MatrixXd tall(3, 0);
  const std::string t = fw::encode_doubles(tall);
  EXPECT_EQ(fw::decode_matrix(t.data(), t.size(), "t").rows(), 3);
  const Eigen::VectorXd empty(0);
  const std::string v = fw::encode_doubles(empty);
  EXPECT_EQ(fw::decode_vector(v.data(), v.size(), "v").size(), 0);
  std::string out;
  fw::append_float64s(out, nullptr, 0);
  EXPECT_TRUE(out.empty());
  fw::read_float64s(out.data(), 0, nullptr);
}
