// The returns table, one row per date: the day's cross-section as two parallel arrays
// (ascending asset ids, their returns), with no missing values stored.
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

// Decodes one row's two blobs into `out`; throws std::runtime_error when they disagree.
void decode_cross_section(const SQLite::Column& ids, const SQLite::Column& values, CrossSection& out);

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
