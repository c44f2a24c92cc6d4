// Stored returns over a range of dates as one dense block (dates x assets, NaN for a
// missing value), from which each window of a refresh is cut without reading again.
#pragma once

#include <SQLiteCpp/SQLiteCpp.h>

#include <cstdint>
#include <string>
#include <vector>

#include "asset_directory.h"
#include "factorwatch/engine/panel.h"

namespace factorwatch::storage::detail {

// Every stored date, ascending.
std::vector<std::int32_t> stored_dates(SQLite::Database& sql);

class ReturnsSpan {
 public:
  // Dates first..last (inclusive, as stored); assets: `universe` ids (ascending), or,
  // when empty, every asset whose stored returns overlap the range.
  ReturnsSpan(SQLite::Database& sql, AssetDirectory& directory, std::int32_t first, std::int32_t last,
              const std::vector<std::int32_t>& universe);

  const std::vector<std::int32_t>& dates() const { return dates_; }

  // Rows [begin, begin + count) as a panel of the assets with at least one return in them.
  engine::ReturnsPanel window(std::size_t begin, std::size_t count) const;

 private:
  std::vector<std::int32_t> dates_;
  std::vector<std::string> names_;  // per column
  engine::RowMatrix values_;
};

// Fingerprint of a window's input: its dates, asset names and returns.
std::string panel_fingerprint(const engine::ReturnsPanel& panel);

}  // namespace factorwatch::storage::detail
