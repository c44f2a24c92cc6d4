// Vectors and matrices as BLOBs: little-endian, so a database file moves between machines.
//
//   doubles:  u32 rows, u32 cols, then rows * cols float64 in column-major order
//             (a vector is rows x 1) — the shape travels with the numbers;
//   int32s:   the values only (asset id lists; the length is the blob size / 4);
//   flags:    one byte per entry, 0 or 1.
// Decoding checks the size against the shape and throws std::runtime_error naming the
// column, so a damaged row is reported rather than read past its end.
#pragma once

#include <Eigen/Dense>
#include <cstdint>
#include <string>
#include <vector>

namespace factorwatch::storage::detail {

std::string encode_doubles(const Eigen::MatrixXd& m);
std::string encode_doubles(const Eigen::VectorXd& v);
Eigen::MatrixXd decode_matrix(const void* data, std::size_t bytes, const char* column);
Eigen::VectorXd decode_vector(const void* data, std::size_t bytes, const char* column);

std::string encode_int32s(const std::vector<std::int32_t>& values);
std::vector<std::int32_t> decode_int32s(const void* data, std::size_t bytes, const char* column);

std::string encode_flags(const std::vector<bool>& flags);
std::vector<bool> decode_flags(const void* data, std::size_t bytes, const char* column);

// Raw little-endian float64 arrays without a shape (the returns table's cross-sections).
void append_float64s(std::string& out, const double* values, std::size_t n);
void read_float64s(const void* data, std::size_t n, double* out);
void append_int32s(std::string& out, const std::int32_t* values, std::size_t n);
void read_int32s(const void* data, std::size_t n, std::int32_t* out);

}  // namespace factorwatch::storage::detail
