// Loading a returns file into a test database the way `factorwatch load` does (read,
// validate, store in one transaction), for tests that work below the command line.
#pragma once

#include <string>

#include "factorwatch/storage/content_hash.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/ingest.h"
#include "factorwatch/storage/returns_csv.h"

namespace factorwatch::testing {

inline void load_returns(storage::Database& db, const std::string& path) {
  storage::ReturnsFile file = storage::read_returns_file(path, {});
  storage::IngestSource source;
  source.path = path;
  source.layout = file.layout;
  source.content_sha256 = storage::file_sha256(path);
  storage::store_returns(db, file.panel, source);
}

}  // namespace factorwatch::testing
