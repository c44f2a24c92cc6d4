// Checking a whole database: SQLite's own structure (PRAGMA integrity_check) and every
// checksum factorwatch keeps (each returns row, each matrix blob of the windows, their
// alignments and drift). Reads only; works on a read-only database.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "factorwatch/storage/database.h"

namespace factorwatch::storage {

struct VerifyProblem {
  std::string table;  // "returns", "windows", ...; "(file)" for SQLite's own check
  std::string row;    // e.g. "date 2024-01-02", "model 'm1' (version 1), window 2024-01-31"
  std::string what;   // plain English
};

struct VerifyReport {
  std::vector<VerifyProblem> problems;
  std::size_t returns_rows = 0;
  std::size_t windows = 0;
  std::size_t alignments = 0;
  std::size_t drift_rows = 0;
  std::size_t blobs = 0;  // matrix blobs checked
  double seconds = 0;
};

VerifyReport verify_database(Database& db);

}  // namespace factorwatch::storage
