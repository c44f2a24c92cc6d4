// The hashes and the BLOB layout the database relies on.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <cstring>
#include <string>

#include "blob_codec.h"
#include "factorwatch/storage/content_hash.h"
#include "factorwatch/storage/returns_csv.h"
#include "fingerprint.h"
#include "sha256.h"
#include "storage_fixtures.h"

namespace {

using namespace factorwatch::storage::detail;

// Source: FIPS 180-2, "Secure Hash Standard", Appendix B (SHA-256 examples B.1, B.2,
// B.3), and the SHA-256 of the empty message (NIST CSRC example values).
TEST(Sha256, PublishedExamples) {
  EXPECT_EQ(sha256_hex("abc"), "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  EXPECT_EQ(sha256_hex("abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq"),
            "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
  EXPECT_EQ(sha256_hex(std::string(1000000, 'a')),
            "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0");
  EXPECT_EQ(sha256_hex(""), "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
}

// Split updates at every boundary around the 64-byte block give the one-shot digest.
TEST(Sha256, IncrementalEqualsOneShot) {
  std::string text;
  for (int i = 0; i < 300; ++i) text += static_cast<char>('a' + i % 26);
  const std::string expected = sha256_hex(text);
  for (std::size_t cut = 0; cut <= text.size(); cut += 7) {
    Sha256 s;
    s.update(text.data(), cut);
    s.update(text.data() + cut, text.size() - cut);
    std::string hex;
    for (auto b : s.finish()) {
      char two[3];
      std::snprintf(two, sizeof two, "%02x", b);
      hex += two;
    }
    EXPECT_EQ(hex, expected) << "cut at " << cut;
  }
}

// The recorded content hash is what `sha256sum FILE` prints (GNU coreutils), so an
// operator can match an ingest run to a file.
TEST(Sha256, FileHashMatchesSha256sum) {
  factorwatch::testing::TempDir dir;
  std::string text = "date,asset,return\n";
  for (int i = 0; i < 5000; ++i) text += "2024-01-02,ZQ-" + std::to_string(i) + ",0.001\n";
  factorwatch::testing::write_text(dir.file("f.csv"), text);
  FILE* pipe = ::popen(("sha256sum '" + dir.file("f.csv") + "'").c_str(), "r");
  ASSERT_NE(pipe, nullptr);
  char digest[65] = {};
  ASSERT_EQ(std::fread(digest, 1, 64, pipe), 64u);
  ::pclose(pipe);
  EXPECT_EQ(factorwatch::storage::file_sha256(dir.file("f.csv")), std::string(digest));
}

// The returns reader hashes a small file on its own thread and a large one (1 MiB and
// more) on another while it parses: on both sides of that line the recorded hash is what
// `sha256sum FILE` prints (GNU coreutils).
TEST(Sha256, ReturnsReaderHashMatchesSha256sumOnBothSidesOfTheThreadLine) {
  factorwatch::testing::TempDir dir;
  for (const int assets : {2000, 40000}) {  // about 55 KB and 1.2 MB
    std::string text = "date,asset,return\n";
    for (int i = 0; i < assets; ++i) text += "2024-01-02,ZQ-" + std::to_string(100000 + i) + ",0.001\n";
    const std::string path = dir.file("r" + std::to_string(assets) + ".csv");
    factorwatch::testing::write_text(path, text);
    const auto r = factorwatch::testing::run_shell("sha256sum '" + path + "'", dir.file(".stderr"));
    ASSERT_EQ(r.status, 0) << r.err;
    const auto file = factorwatch::storage::read_returns_file(path, {});
    EXPECT_EQ(file.content_sha256, r.out.substr(0, 64)) << text.size() << " bytes";
    EXPECT_EQ(file.panel.assets.size(), static_cast<std::size_t>(assets));
  }
}

TEST(Fingerprint, ChangesWithAnyBit) {
  std::vector<double> values(1000, 0.01);
  Fingerprint a;
  a.add(values.data(), values.size() * sizeof(double));
  values[517] = std::nextafter(0.01, 1.0);
  Fingerprint b;
  b.add(values.data(), values.size() * sizeof(double));
  EXPECT_NE(a.hex(), b.hex());
  EXPECT_EQ(a.hex().size(), 16u);
  Fingerprint c, d;  // boundaries between strings count
  c.add(std::string("ab"));
  c.add(std::string("c"));
  d.add(std::string("a"));
  d.add(std::string("bc"));
  EXPECT_NE(c.hex(), d.hex());
}

TEST(BlobCodec, RoundTripsExactlyWithShape) {
  Eigen::MatrixXd m(3, 2);
  m << 1.5, -2.25, 1e-300, 3.0, -0.0, 0.1;
  const std::string blob = encode_doubles(m);
  EXPECT_EQ(blob.size(), 8u + 6 * 8 + 8);  // shape, values, checksum (schema 7)
  const Eigen::MatrixXd back = decode_matrix(blob.data(), blob.size(), "m");
  ASSERT_EQ(back.rows(), 3);
  ASSERT_EQ(back.cols(), 2);
  EXPECT_EQ(std::memcmp(back.data(), m.data(), 6 * sizeof(double)), 0);
  // Little-endian on disk: the shape's first byte is the low byte of 3.
  EXPECT_EQ(static_cast<unsigned char>(blob[0]), 3);
  EXPECT_THROW(decode_matrix(blob.data(), blob.size() - 1, "m"), std::runtime_error);
  const std::vector<std::int32_t> ids = {1, 7, 1 << 20};
  const std::string id_blob = encode_int32s(ids);
  EXPECT_EQ(decode_int32s(id_blob.data(), id_blob.size(), "ids"), ids);
  const std::vector<bool> flags = {true, false, true};
  const std::string flag_blob = encode_flags(flags);
  EXPECT_EQ(decode_flags(flag_blob.data(), flag_blob.size(), "f"), flags);
}

}  // namespace
