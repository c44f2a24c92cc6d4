#include "returns_rows.h"

#include <cstring>
#include <string>

#include "blob_codec.h"
#include "factorwatch/storage/damaged_data.h"
#include "factorwatch/storage/date_key.h"
#include "fingerprint.h"

namespace factorwatch::storage::detail {
namespace {

[[noreturn]] void damaged(std::int32_t date, const std::string& what) {
  throw DamagedData("damaged returns row of " + key_text(date) + ": " + what +
                    "; restore the database from a backup, or run factorwatch verify for the full list");
}

}  // namespace

std::int64_t row_checksum(std::int32_t date, const void* ids, std::size_t id_bytes, const void* values,
                          std::size_t value_bytes) {
  Fingerprint f;
  f.add(std::int64_t{date});
  f.add(static_cast<std::int64_t>(id_bytes));
  f.add(ids, id_bytes);
  f.add(values, value_bytes);
  const std::uint64_t sum = f.value();
  std::int64_t stored;
  std::memcpy(&stored, &sum, sizeof stored);  // SQLite integers are signed
  return stored;
}

void decode_cross_section(std::int32_t date, const SQLite::Column& ids, const SQLite::Column& values,
                          const SQLite::Column& checksum, CrossSection& out) {
  out.clear();
  if (!ids.isBlob() && !ids.isNull() && ids.getBytes() > 0) damaged(date, "the asset ids are not a blob");
  if (!values.isBlob() && !values.isNull() && values.getBytes() > 0) damaged(date, "the returns are not a blob");
  // Pointer first, then size: the order SQLite asks for (sqlite3_column_blob).
  const void* id_data = ids.getBlob();
  const std::size_t id_bytes = static_cast<std::size_t>(ids.getBytes());
  const void* value_data = values.getBlob();
  const std::size_t value_bytes = static_cast<std::size_t>(values.getBytes());
  if (checksum.isNull() || checksum.getInt64() != row_checksum(date, id_data, id_bytes, value_data, value_bytes))
    damaged(date, "its checksum does not match (the stored bytes changed after they were written)");
  if (id_bytes % 4 != 0 || value_bytes != 2 * id_bytes)
    damaged(date, std::to_string(id_bytes) + " bytes of asset ids, " + std::to_string(value_bytes) +
                      " bytes of returns");
  const std::size_t n = id_bytes / 4;
  out.ids.resize(n);
  out.values.resize(n);
  if (n == 0) return;
  read_int32s(id_data, n, out.ids.data());
  read_float64s(value_data, n, out.values.data());
  // Readers index arrays by asset id: a non-positive or unordered id must never reach them.
  for (std::size_t k = 0; k < n; ++k)
    if (out.ids[k] <= 0 || (k > 0 && out.ids[k] <= out.ids[k - 1])) {
      const std::int32_t bad = out.ids[k];
      out.clear();
      damaged(date, "asset id " + std::to_string(bad) + " at position " + std::to_string(k) +
                        " is not positive or not ascending");
    }
}

CrossSectionReader::CrossSectionReader(SQLite::Database& sql)
    : select_(sql, "SELECT asset_ids, returns, checksum FROM returns WHERE date = ?") {}

bool CrossSectionReader::read(std::int32_t date, CrossSection& out) {
  out.clear();
  select_.reset();
  select_.bind(1, date);
  if (!select_.executeStep()) return false;
  decode_cross_section(date, select_.getColumn(0), select_.getColumn(1), select_.getColumn(2), out);
  return true;
}

CrossSectionWriter::CrossSectionWriter(SQLite::Database& sql)
    : upsert_(sql, "INSERT OR REPLACE INTO returns (date, asset_ids, returns, checksum) VALUES (?, ?, ?, ?)") {}

void CrossSectionWriter::write(std::int32_t date, const CrossSection& row) {
  ids_.clear();
  values_.clear();
  append_int32s(ids_, row.ids.data(), row.ids.size());
  append_float64s(values_, row.values.data(), row.values.size());
  upsert_.bind(1, date);
  upsert_.bindNoCopy(2, ids_.data(), static_cast<int>(ids_.size()));
  upsert_.bindNoCopy(3, values_.data(), static_cast<int>(values_.size()));
  upsert_.bind(4, row_checksum(date, ids_.data(), ids_.size(), values_.data(), values_.size()));
  upsert_.exec();
  upsert_.reset();
}

}  // namespace factorwatch::storage::detail
