// Stored returns over a range of dates as one dense block (dates x assets, NaN for a
// missing value), from which each window of a refresh is cut without reading again.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "factorwatch/engine/panel.h"
#include "factorwatch/storage/database.h"

namespace factorwatch::storage {

// Every stored date, ascending.
std::vector<engine::Date> stored_dates(Database& db);

// The asset ids of these names that have stored returns, ascending (the column order of a
// span); names never stored are left out.
std::vector<std::int32_t> stored_asset_ids(Database& db, const std::vector<std::string>& names);

// Per stored date, how many assets of a universe have a return on it.
struct DateCount {
  engine::Date date;
  int assets = 0;
};

// Every stored date, ascending, with the number of `universe` ids (ascending; empty = every
// asset) holding a return on it. Reads the rows' asset ids only (a window's rows are
// checked against their checksums when a ReturnsSpan reads them); an id list that is not
// whole 4-byte ids is reported as damaged data.
std::vector<DateCount> stored_date_counts(Database& db, const std::vector<std::int32_t>& universe);

class ReturnsSpan {
 public:
  // Dates first..last (inclusive, as stored); assets: `universe` ids (ascending), or,
  // when empty, every asset whose stored returns overlap the range. With `calendar`
  // (ascending), only the rows on its dates are the span's rows: a model's window leaves
  // out the stored dates on which too little of its universe traded.
  ReturnsSpan(Database& db, engine::Date first, engine::Date last, const std::vector<std::int32_t>& universe,
              const std::vector<engine::Date>* calendar = nullptr);

  // The span's rows' dates; every stored date read, the ones left out included.
  const std::vector<engine::Date>& dates() const { return dates_; }
  const std::vector<engine::Date>& stored_dates() const { return stored_dates_; }

  // The digest of every stored row from the date of row `begin` to that of row
  // begin + count - 1, left-out dates included: equal to stored_rows_digest over the same
  // dates while no load has changed them since.
  std::uint64_t rows_digest(std::size_t begin, std::size_t count) const;

  // Rows [begin, begin + count) as a panel of the assets with at least one return in them.
  engine::ReturnsPanel window(std::size_t begin, std::size_t count) const;

 private:
  std::vector<engine::Date> dates_;
  std::vector<engine::Date> stored_dates_;
  std::vector<std::int64_t> checksums_;  // per stored date, as stored (and checked on reading)
  std::vector<std::string> names_;  // per column
  engine::RowMatrix values_;
};

// The digest of the stored returns rows with dates in [first, last], from their dates
// and checksums only (the index returns_checksums holds both: no blob is read).
std::uint64_t stored_rows_digest(Database& db, engine::Date first, engine::Date last);

// Fingerprint of a window's input: its dates, asset names and returns.
std::string panel_fingerprint(const engine::ReturnsPanel& panel);

}  // namespace factorwatch::storage
