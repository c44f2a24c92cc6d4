#include "returns_rows.h"

#include <stdexcept>
#include <string>

#include "blob_codec.h"

namespace factorwatch::storage::detail {

void decode_cross_section(const SQLite::Column& ids, const SQLite::Column& values, CrossSection& out) {
  const std::size_t id_bytes = static_cast<std::size_t>(ids.getBytes());
  const std::size_t value_bytes = static_cast<std::size_t>(values.getBytes());
  if (id_bytes % 4 != 0 || value_bytes != 2 * id_bytes)
    throw std::runtime_error("damaged returns row: " + std::to_string(id_bytes) + " bytes of asset ids, " +
                             std::to_string(value_bytes) + " bytes of returns");
  const std::size_t n = id_bytes / 4;
  out.ids.resize(n);
  out.values.resize(n);
  if (n == 0) return;
  read_int32s(ids.getBlob(), n, out.ids.data());
  read_float64s(values.getBlob(), n, out.values.data());
}

CrossSectionReader::CrossSectionReader(SQLite::Database& sql)
    : select_(sql, "SELECT asset_ids, returns FROM returns WHERE date = ?") {}

bool CrossSectionReader::read(std::int32_t date, CrossSection& out) {
  out.clear();
  select_.reset();
  select_.bind(1, date);
  if (!select_.executeStep()) return false;
  decode_cross_section(select_.getColumn(0), select_.getColumn(1), out);
  return true;
}

CrossSectionWriter::CrossSectionWriter(SQLite::Database& sql)
    : upsert_(sql, "INSERT OR REPLACE INTO returns (date, asset_ids, returns) VALUES (?, ?, ?)") {}

void CrossSectionWriter::write(std::int32_t date, const CrossSection& row) {
  ids_.clear();
  values_.clear();
  append_int32s(ids_, row.ids.data(), row.ids.size());
  append_float64s(values_, row.values.data(), row.values.size());
  upsert_.bind(1, date);
  upsert_.bindNoCopy(2, ids_.data(), static_cast<int>(ids_.size()));
  upsert_.bindNoCopy(3, values_.data(), static_cast<int>(values_.size()));
  upsert_.exec();
  upsert_.reset();
}

}  // namespace factorwatch::storage::detail
