// Saying where damaged data was found: a blob's checksum names only its column, the
// reader knows the row. These add the model and the window (as-of date) to the message,
// so that the error, `factorwatch verify` and the daemon's answer all name what to refit
// or restore.
#pragma once

#include <cstdint>
#include <string>

#include "factorwatch/storage/damaged_data.h"
#include "factorwatch/storage/database.h"

namespace factorwatch::storage::detail {

// "model 'm1' (version 2), window 2024-01-31, table windows" (no table when nullptr); looks the model up by its
// version id (a damaged-row path only, so the query costs nothing on a good read).
std::string window_place(Database& db, long long model_version_id, std::int32_t as_of, const char* table);

[[noreturn]] void rethrow_for_window(Database& db, long long model_version_id, std::int32_t as_of, const char* table,
                                     const std::exception& e);

}  // namespace factorwatch::storage::detail
