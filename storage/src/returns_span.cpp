#include "factorwatch/storage/returns_span.h"

#include <SQLiteCpp/SQLiteCpp.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>
#include <string>

#include "asset_directory.h"
#include "blob_codec.h"
#include "factorwatch/storage/damaged_data.h"
#include "factorwatch/storage/date_key.h"
#include "fingerprint.h"
#include "returns_rows.h"

namespace factorwatch::storage {

using detail::CrossSection;
using detail::Fingerprint;

std::vector<engine::Date> stored_dates(Database& db) {
  std::vector<engine::Date> dates;
  SQLite::Statement q(db.sql(), "SELECT date FROM returns ORDER BY date");
  while (q.executeStep()) dates.push_back(stored_date(q.getColumn(0).getInt()));
  return dates;
}

std::vector<std::int32_t> stored_asset_ids(Database& db, const std::vector<std::string>& names) {
  std::vector<std::int32_t> ids;
  for (const std::string& name : names) {
    const std::int32_t id = db.assets().id(name);
    if (id >= 0) ids.push_back(id);
  }
  std::sort(ids.begin(), ids.end());
  return ids;
}

std::vector<DateCount> stored_date_counts(Database& db, const std::vector<std::int32_t>& universe) {
  std::vector<DateCount> out;
  // Every asset: the length of the id list is the count, without reading the ids.
  if (universe.empty()) {
    SQLite::Statement q(db.sql(), "SELECT date, length(asset_ids) FROM returns ORDER BY date");
    while (q.executeStep()) {
      const std::int32_t date = q.getColumn(0).getInt();
      const auto bytes = q.getColumn(1).getInt64();
      if (bytes % 4 != 0)
        throw DamagedData("returns of " + key_text(date) + ": " + std::to_string(bytes) + " bytes of asset ids");
      out.push_back({stored_date(date), static_cast<int>(bytes / 4)});
    }
    return out;
  }
  SQLite::Statement q(db.sql(), "SELECT date, asset_ids FROM returns ORDER BY date");
  std::vector<std::int32_t> ids;
  while (q.executeStep()) {
    const std::int32_t date = q.getColumn(0).getInt();
    const SQLite::Column blob = q.getColumn(1);
    const void* data = blob.getBlob();
    const auto bytes = static_cast<std::size_t>(blob.getBytes());
    if (bytes % 4 != 0)
      throw DamagedData("returns of " + key_text(date) + ": " + std::to_string(bytes) + " bytes of asset ids");
    ids.resize(bytes / 4);
    if (!ids.empty()) detail::read_int32s(data, ids.size(), ids.data());
    // Both ascending (a damaged, unordered list only miscounts; its span read reports it).
    int n = 0;
    for (std::size_t a = 0, b = 0; a < ids.size() && b < universe.size();) {
      if (ids[a] < universe[b]) ++a;
      else if (universe[b] < ids[a]) ++b;
      else ++n, ++a, ++b;
    }
    out.push_back({stored_date(date), n});
  }
  return out;
}

ReturnsSpan::ReturnsSpan(Database& db, engine::Date first_date, engine::Date last_date,
                         const std::vector<std::int32_t>& universe, const std::vector<engine::Date>* calendar) {
  const std::int32_t first = first_date.key(), last = last_date.key();
  SQLite::Database& sql = db.sql();
  detail::AssetDirectory& directory = db.assets();
  std::vector<std::int32_t> ids = universe;
  if (ids.empty()) {
    SQLite::Statement q(sql, "SELECT id FROM assets WHERE first_date <= ? AND last_date >= ? ORDER BY id");
    q.bind(1, last);
    q.bind(2, first);
    while (q.executeStep()) ids.push_back(q.getColumn(0).getInt());
  }
  const std::int32_t max_id = ids.empty() ? 0 : *std::max_element(ids.begin(), ids.end());
  std::vector<std::int32_t> column_of(static_cast<std::size_t>(max_id) + 1, -1);
  for (std::size_t c = 0; c < ids.size(); ++c) {
    column_of[static_cast<std::size_t>(ids[c])] = static_cast<std::int32_t>(c);
    names_.push_back(directory.name(ids[c]));
  }

  SQLite::Statement count(sql, "SELECT count(*) FROM returns WHERE date BETWEEN ? AND ?");
  count.bind(1, first);
  count.bind(2, last);
  count.executeStep();
  const auto rows = static_cast<Eigen::Index>(count.getColumn(0).getInt64());
  values_.setConstant(rows, static_cast<Eigen::Index>(ids.size()), std::numeric_limits<double>::quiet_NaN());

  SQLite::Statement q(sql,
                      "SELECT date, asset_ids, returns, checksum FROM returns WHERE date BETWEEN ? AND ? ORDER BY date");
  q.bind(1, first);
  q.bind(2, last);
  CrossSection row;
  Eigen::Index t = 0;
  while (t < rows && q.executeStep()) {
    const std::int32_t date = q.getColumn(0).getInt();
    const engine::Date day = stored_date(date);
    stored_dates_.push_back(day);
    checksums_.push_back(q.getColumn(3).getInt64());
    if (calendar != nullptr && !std::binary_search(calendar->begin(), calendar->end(), day)) continue;
    detail::decode_cross_section(date, q.getColumn(1), q.getColumn(2), q.getColumn(3), row);  // ids > 0, ascending
    dates_.push_back(day);
    double* out = values_.data() + t * values_.cols();
    for (std::size_t k = 0; k < row.ids.size(); ++k) {
      const std::int32_t id = row.ids[k];
      if (id > max_id) break;  // ascending: no later id is a column either
      const std::int32_t c = column_of[static_cast<std::size_t>(id)];
      if (c >= 0) out[c] = row.values[k];
    }
    ++t;
  }
  // A load that removed rows between the count and the read (the two statements are two
  // snapshots) leaves fewer rows than counted: the block keeps only the rows read, so
  // dates() and the block always agree (the refresh compares dates() with its plan).
  if (t < rows) values_.conservativeResize(t, values_.cols());
}

std::uint64_t ReturnsSpan::rows_digest(std::size_t begin, std::size_t count) const {
  Fingerprint f;
  if (count == 0 || begin >= dates_.size()) return f.value();
  const std::size_t last = std::min(begin + count, dates_.size()) - 1;
  const auto from = std::lower_bound(stored_dates_.begin(), stored_dates_.end(), dates_[begin]);
  const auto to = std::upper_bound(from, stored_dates_.end(), dates_[last]);
  for (auto at = from; at != to; ++at) {
    f.add(std::int64_t{at->key()});
    f.add(checksums_[static_cast<std::size_t>(at - stored_dates_.begin())]);
  }
  return f.value();
}

std::uint64_t stored_rows_digest(Database& db, engine::Date first, engine::Date last) {
  SQLite::Statement q(db.sql(), "SELECT date, checksum FROM returns WHERE date BETWEEN ? AND ? ORDER BY date");
  q.bind(1, first.key());
  q.bind(2, last.key());
  Fingerprint f;
  while (q.executeStep()) {
    f.add(std::int64_t{q.getColumn(0).getInt()});
    f.add(q.getColumn(1).getInt64());
  }
  return f.value();
}

engine::ReturnsPanel ReturnsSpan::window(std::size_t begin, std::size_t count) const {
  const auto b = static_cast<Eigen::Index>(begin);
  const auto n = static_cast<Eigen::Index>(count);
  if (begin + count > dates_.size())
    throw std::logic_error("returns span: rows " + std::to_string(begin) + " + " + std::to_string(count) + " of " +
                           std::to_string(dates_.size()));
  const Eigen::Index width = values_.cols();
  // Columns with at least one return in the rows, found row by row (the block is
  // row-major, so this streams through memory once).
  std::vector<char> present(static_cast<std::size_t>(width), 0);
  for (Eigen::Index t = b; t < b + n; ++t) {
    const double* row = values_.data() + t * width;
    for (Eigen::Index c = 0; c < width; ++c) present[static_cast<std::size_t>(c)] |= !std::isnan(row[c]);
  }
  std::vector<Eigen::Index> columns;
  for (Eigen::Index c = 0; c < width; ++c)
    if (present[static_cast<std::size_t>(c)]) columns.push_back(c);

  engine::ReturnsPanel panel;
  for (Eigen::Index t = b; t < b + n; ++t) panel.dates.push_back(dates_[static_cast<std::size_t>(t)]);
  for (Eigen::Index c : columns) panel.assets.push_back(names_[static_cast<std::size_t>(c)]);
  if (static_cast<Eigen::Index>(columns.size()) == width) {
    panel.values = values_.middleRows(b, n);
    return panel;
  }
  panel.values.resize(n, static_cast<Eigen::Index>(columns.size()));
  for (Eigen::Index t = 0; t < n; ++t) {
    const double* from = values_.data() + (b + t) * width;
    double* to = panel.values.data() + t * panel.values.cols();
    for (std::size_t j = 0; j < columns.size(); ++j) to[j] = from[columns[j]];
  }
  return panel;
}

std::string panel_fingerprint(const engine::ReturnsPanel& panel) {
  Fingerprint f;
  for (engine::Date d : panel.dates) f.add(d.iso());  // as before dates were values: stored hashes stay
  for (const std::string& a : panel.assets) f.add(a);
  f.add(panel.values.data(), static_cast<std::size_t>(panel.values.size()) * sizeof(double));
  return f.hex();
}

}  // namespace factorwatch::storage
