#include "asset_directory.h"

#include <stdexcept>

namespace factorwatch::storage::detail {

void AssetDirectory::reload() {
  names_.clear();
  ids_.clear();
  SQLite::Statement q(sql_, "SELECT id, name FROM assets");
  while (q.executeStep()) {
    const std::int32_t id = q.getColumn(0).getInt();
    if (id < 0) throw std::runtime_error("damaged assets table: negative id");
    if (static_cast<std::size_t>(id) >= names_.size()) names_.resize(static_cast<std::size_t>(id) + 1);
    names_[static_cast<std::size_t>(id)] = q.getColumn(1).getString();
    ids_.emplace(names_[static_cast<std::size_t>(id)], id);
  }
  loaded_ = true;
}

const std::string& AssetDirectory::name(std::int32_t id) {
  for (int attempt = 0; attempt < 2; ++attempt) {
    if (!loaded_ || attempt == 1) reload();
    if (id >= 0 && static_cast<std::size_t>(id) < names_.size() && !names_[static_cast<std::size_t>(id)].empty())
      return names_[static_cast<std::size_t>(id)];
  }
  throw std::runtime_error("asset id " + std::to_string(id) + " is not in the assets table");
}

std::int32_t AssetDirectory::id(const std::string& name) {
  for (int attempt = 0; attempt < 2; ++attempt) {
    if (!loaded_ || attempt == 1) reload();
    const auto found = ids_.find(name);
    if (found != ids_.end()) return found->second;
  }
  return -1;
}

}  // namespace factorwatch::storage::detail
