// The returns table, one row per date: the day's cross-section as two parallel arrays
// (ascending asset ids, their returns), with no missing values stored, and a checksum
// of the row (schema 7) that every read checks.
#pragma once

#include <SQLiteCpp/SQLiteCpp.h>

#include <cstdint>
#include <vector>

namespace factorwatch::storage::detail {

struct CrossSection {
  std::vector<std::int32_t> ids;  // ascending
  std::vector<double> values;
  void clear() { ids.clear(), values.clear(); }
  void push(std::int32_t id, double value) { ids.push_back(id), values.push_back(value); }
};

// The row's checksum: the Fingerprint (fingerprint.h) of its date and its two blobs as
// stored, kept in the column `checksum` as a signed 64-bit integer.
std::int64_t row_checksum(std::int32_t date, const void* ids, std::size_t id_bytes, const void* values,
                          std::size_t value_bytes);

// Decodes one row's two blobs into `out`, after checking the row's checksum, the blob
// sizes and that the ids ascend and are positive (so no reader can index out of bounds
// with them); throws DamagedData naming the date otherwise.
void decode_cross_section(std::int32_t date, const SQLite::Column& ids, const SQLite::Column& values,
                          const SQLite::Column& checksum, CrossSection& out);

class CrossSectionReader {
 public:
  explicit CrossSectionReader(SQLite::Database& sql);
  // False (and `out` empty) when the date has no row.
  bool read(std::int32_t date, CrossSection& out);

 private:
  SQLite::Statement select_;
};

class CrossSectionWriter {
 public:
  explicit CrossSectionWriter(SQLite::Database& sql);
  void write(std::int32_t date, const CrossSection& row);

 private:
  SQLite::Statement upsert_;
  std::string ids_, values_;
};

}  // namespace factorwatch::storage::detail
