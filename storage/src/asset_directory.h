// Asset ids and names, both ways, read once and reloaded when a lookup misses (another
// process may have added assets since).
#pragma once

#include <SQLiteCpp/SQLiteCpp.h>

#include <cstdint>
#include <string>
#include <unordered_map>
#include <vector>

namespace factorwatch::storage::detail {

class AssetDirectory {
 public:
  explicit AssetDirectory(SQLite::Database& sql) : sql_(sql) {}
  // Throws std::runtime_error for an id the database does not hold.
  const std::string& name(std::int32_t id);
  // -1 when the name is not stored.
  std::int32_t id(const std::string& name);

 private:
  void reload();
  SQLite::Database& sql_;
  bool loaded_ = false;
  std::vector<std::string> names_;  // by id (ids are small positive rowids)
  std::unordered_map<std::string, std::int32_t> ids_;
};

}  // namespace factorwatch::storage::detail
