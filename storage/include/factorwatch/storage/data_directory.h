// Where the database lives.
//
// In order: the --data option, the FACTORWATCH_DATA environment variable,
// $XDG_DATA_HOME/factorwatch, $HOME/.local/share/factorwatch. The directory is created
// (owner-only permissions) when missing; the database file in it is factorwatch.db.
#pragma once

#include <string>

namespace factorwatch::storage {

inline constexpr const char* kDatabaseFileName = "factorwatch.db";

// `option` is the --data value ("" when not given). Throws std::runtime_error when no
// directory can be determined or created.
std::string resolve_data_directory(const std::string& option);

// resolve_data_directory(option) + "/factorwatch.db".
std::string database_path(const std::string& option);

}  // namespace factorwatch::storage
