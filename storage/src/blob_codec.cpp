#include "blob_codec.h"

#include <cstring>

#include "factorwatch/storage/damaged_data.h"
#include "fingerprint.h"

namespace factorwatch::storage::detail {
namespace {

// Every platform we build on is little-endian; the byte swaps keep the file format
// honest should that ever change, and the compiler folds the test away here.
bool host_is_little_endian() {
  const std::uint32_t probe = 1;
  unsigned char first = 0;
  std::memcpy(&first, &probe, 1);
  return first == 1;
}

template <typename Word>
Word swap_bytes(Word w) {
  unsigned char b[sizeof(Word)];
  std::memcpy(b, &w, sizeof(Word));
  for (std::size_t i = 0; i < sizeof(Word) / 2; ++i) std::swap(b[i], b[sizeof(Word) - 1 - i]);
  std::memcpy(&w, b, sizeof(Word));
  return w;
}

template <typename T>
void append_words(std::string& out, const T* values, std::size_t n) {
  // An empty matrix or vector has no data pointer, and memcpy from null is undefined
  // even for 0 bytes (UBSan aborts the refresh that stores one).
  if (n == 0) return;
  const std::size_t at = out.size();
  out.resize(at + n * sizeof(T));
  std::memcpy(out.data() + at, values, n * sizeof(T));
  if (!host_is_little_endian()) {
    T* words = reinterpret_cast<T*>(out.data() + at);
    for (std::size_t i = 0; i < n; ++i) words[i] = swap_bytes(words[i]);
  }
}

template <typename T>
void read_words(const void* data, std::size_t n, T* out) {
  if (n == 0) return;  // out (an empty matrix's data) may be null, as above
  std::memcpy(out, data, n * sizeof(T));
  if (!host_is_little_endian())
    for (std::size_t i = 0; i < n; ++i) out[i] = swap_bytes(out[i]);
}

[[noreturn]] void damaged(const char* column, std::size_t bytes, const std::string& expected) {
  throw DamagedData(std::string("damaged value in column '") + column + "': " + std::to_string(bytes) +
                    " bytes, expected " + expected);
}

std::string encode_shape(Eigen::Index rows, Eigen::Index cols, const double* values) {
  std::string out;
  const std::uint32_t shape[2] = {static_cast<std::uint32_t>(rows), static_cast<std::uint32_t>(cols)};
  append_words(out, shape, 2);
  append_words(out, values, static_cast<std::size_t>(rows * cols));
  seal_blob(out);
  return out;
}

}  // namespace

std::uint64_t blob_checksum(const void* data, std::size_t bytes) {
  Fingerprint f;
  f.add(data, bytes);
  return f.value();
}

void seal_blob(std::string& payload) {
  const std::uint64_t sum = blob_checksum(payload.data(), payload.size());
  append_words(payload, &sum, 1);
}

std::size_t sealed_payload(const void* data, std::size_t bytes, const char* column) {
  if (bytes < 8 || !data) damaged(column, bytes, "at least the 8 bytes of its checksum");
  const std::size_t payload = bytes - 8;
  std::uint64_t stored;
  read_words(static_cast<const unsigned char*>(data) + payload, 1, &stored);
  if (stored != blob_checksum(data, payload))
    throw DamagedData(std::string("damaged value in column '") + column +
                      "': its checksum does not match (the stored bytes changed after they were written)");
  return payload;
}

std::string encode_doubles(const Eigen::MatrixXd& m) { return encode_shape(m.rows(), m.cols(), m.data()); }
std::string encode_doubles(const Eigen::VectorXd& v) { return encode_shape(v.size(), 1, v.data()); }

Eigen::MatrixXd decode_matrix(const void* data, std::size_t sealed_bytes, const char* column) {
  const std::size_t bytes = sealed_payload(data, sealed_bytes, column);
  if (bytes < 8) damaged(column, bytes, "at least 8");
  std::uint32_t shape[2];
  read_words(data, 2, shape);
  const std::size_t count = std::size_t{shape[0]} * shape[1];
  // The first test keeps 8 + 8 * count from wrapping for a damaged shape.
  if (count > (bytes - 8) / 8 || bytes != 8 + 8 * count) damaged(column, bytes, std::to_string(8 + 8 * count));
  Eigen::MatrixXd m(shape[0], shape[1]);
  read_words(static_cast<const unsigned char*>(data) + 8, count, m.data());
  return m;
}

Eigen::VectorXd decode_vector(const void* data, std::size_t bytes, const char* column) {
  Eigen::MatrixXd m = decode_matrix(data, bytes, column);
  if (m.cols() != 1 && m.size() != 0) damaged(column, bytes, "a vector (one column)");
  return Eigen::Map<const Eigen::VectorXd>(m.data(), m.size());
}

std::string encode_int32s(const std::vector<std::int32_t>& values) {
  std::string out;
  append_words(out, values.data(), values.size());
  seal_blob(out);
  return out;
}

std::vector<std::int32_t> decode_int32s(const void* data, std::size_t sealed_bytes, const char* column) {
  const std::size_t bytes = sealed_payload(data, sealed_bytes, column);
  if (bytes % 4 != 0) damaged(column, bytes, "a multiple of 4");
  std::vector<std::int32_t> values(bytes / 4);
  read_words(data, values.size(), values.data());
  return values;
}

std::string encode_flags(const std::vector<bool>& flags) {
  std::string out(flags.size(), '\0');
  for (std::size_t i = 0; i < flags.size(); ++i) out[i] = flags[i] ? 1 : 0;
  seal_blob(out);
  return out;
}

std::vector<bool> decode_flags(const void* data, std::size_t sealed_bytes, const char* column) {
  const std::size_t bytes = sealed_payload(data, sealed_bytes, column);
  const unsigned char* b = static_cast<const unsigned char*>(data);
  std::vector<bool> flags(bytes);
  for (std::size_t i = 0; i < bytes; ++i) flags[i] = b[i] != 0;
  return flags;
}

void append_float64s(std::string& out, const double* values, std::size_t n) { append_words(out, values, n); }
void read_float64s(const void* data, std::size_t n, double* out) { read_words(data, n, out); }
void append_int32s(std::string& out, const std::int32_t* values, std::size_t n) { append_words(out, values, n); }
void read_int32s(const void* data, std::size_t n, std::int32_t* out) { read_words(data, n, out); }

}  // namespace factorwatch::storage::detail
