// Storing a returns file: all or nothing.
//
// The file is read and validated in full before the database is touched (returns_csv.h
// lists the rules); a file with any error throws InputError and leaves the database file
// byte for byte as it was. A valid file is merged in one transaction:
//   - a (date, asset) the database does not hold yet is added;
//   - an equal value (bit for bit) is left alone, so loading the same file twice adds
//     nothing (the second run is recorded with the outcome "no change");
//   - a different value is a correction: the new value replaces the old, the pair of
//     values is kept in the corrections table, and every stored window whose dates cover
//     a changed or added date is marked stale, to be refitted by the next refresh;
//   - a missing cell never erases a stored value.
#pragma once

#include <cstddef>
#include <optional>
#include <string>

#include "factorwatch/engine/panel.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/date_key.h"
#include "factorwatch/storage/returns_csv.h"

namespace factorwatch::storage {

// Facts about the file that the panel does not hold.
struct IngestSource {
  std::string path;
  std::string layout;                      // long | wide
  std::string values_in_file = "returns";  // returns | prices (simple returns) | prices (log returns)
  std::size_t data_rows = 0;
  std::string content_sha256;              // of the file's bytes
};

struct LoadSummary {
  long run_id = 0;
  std::string outcome;  // "new data", "correction" or "no change"
  std::size_t dates_in_file = 0;
  engine::Date first_date, last_date;
  std::size_t assets_in_file = 0;
  std::size_t new_assets = 0;
  std::size_t dates_new = 0;  // dates the database held no returns on before
  // The latest stored date before this load (none: the database held no returns), and
  // whether the file brought a date after it: a nightly feed that sends no new date (the
  // same file again, a revision of past days) has stopped moving forward.
  std::optional<engine::Date> latest_before;
  bool moved_forward = false;
  std::size_t values_new = 0;
  std::size_t values_unchanged = 0;
  std::size_t values_corrected = 0;
  std::size_t windows_marked_stale = 0;  // of models' current versions (superseded ones are marked, not counted)
  double seconds = 0;  // storing, not reading
};

// "returns", "prices (simple returns)" or "prices (log returns)", as recorded.
const char* to_string(ValuesInFile values);

// Merges a validated panel into the database in one transaction.
LoadSummary store_returns(Database& db, const engine::ReturnsPanel& panel, const IngestSource& source);

}  // namespace factorwatch::storage
