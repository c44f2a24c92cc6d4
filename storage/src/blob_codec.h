// Vectors and matrices as BLOBs: little-endian, so a database file moves between machines.
//
//   doubles:  u32 rows, u32 cols, then rows * cols float64 in column-major order
//             (a vector is rows x 1) — the shape travels with the numbers;
//   int32s:   the values only (asset id lists; the length is the blob size / 4);
//   flags:    one byte per entry, 0 or 1;
// each followed by an 8-byte checksum of the bytes before it (schema 7; see
// blob_checksum). Decoding checks the checksum, then the size against the shape, and
// throws DamagedData naming the column, so a damaged row is reported rather than read
// past its end or served as a wrong number.
#pragma once

#include <Eigen/Dense>
#include <cstdint>
#include <string>
#include <vector>

namespace factorwatch::storage::detail {

// The checksum of stored bytes: the 64-bit Fingerprint (fingerprint.h) of `bytes` bytes.
std::uint64_t blob_checksum(const void* data, std::size_t bytes);
// Appends the 8-byte checksum of `payload` to it.
void seal_blob(std::string& payload);
// The payload length of a sealed blob; throws DamagedData naming `column` when the blob
// is shorter than its checksum or the checksum does not match.
std::size_t sealed_payload(const void* data, std::size_t bytes, const char* column);

std::string encode_doubles(const Eigen::MatrixXd& m);
std::string encode_doubles(const Eigen::VectorXd& v);
Eigen::MatrixXd decode_matrix(const void* data, std::size_t bytes, const char* column);
Eigen::VectorXd decode_vector(const void* data, std::size_t bytes, const char* column);

std::string encode_int32s(const std::vector<std::int32_t>& values);
std::vector<std::int32_t> decode_int32s(const void* data, std::size_t bytes, const char* column);

std::string encode_flags(const std::vector<bool>& flags);
std::vector<bool> decode_flags(const void* data, std::size_t bytes, const char* column);

// Raw little-endian float64 arrays without a shape or checksum (the returns table's
// cross-sections: their row carries one checksum, returns_rows.h).
void append_float64s(std::string& out, const double* values, std::size_t n);
void read_float64s(const void* data, std::size_t n, double* out);
void append_int32s(std::string& out, const std::int32_t* values, std::size_t n);
void read_int32s(const void* data, std::size_t n, std::int32_t* out);

}  // namespace factorwatch::storage::detail
