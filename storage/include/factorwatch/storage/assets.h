// The assets the database holds returns for.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "factorwatch/storage/database.h"
#include "factorwatch/storage/date_key.h"

namespace factorwatch::storage {

struct AssetInfo {
  std::string name;
  std::optional<engine::Date> first_date, last_date;  // of its stored returns
};

std::vector<AssetInfo> list_assets(Database& db);  // by name
bool has_asset(Database& db, const std::string& name);

}  // namespace factorwatch::storage
