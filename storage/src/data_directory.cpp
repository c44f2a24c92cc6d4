#include "factorwatch/storage/data_directory.h"

#include <cstdlib>
#include <filesystem>
#include <stdexcept>
#include <system_error>

namespace factorwatch::storage {
namespace {

std::string environment(const char* name) {
  const char* value = std::getenv(name);
  return value ? std::string(value) : std::string();
}

}  // namespace

std::string resolve_data_directory(const std::string& option) {
  std::string dir = option;
  if (dir.empty()) dir = environment("FACTORWATCH_DATA");
  if (dir.empty() && !environment("XDG_DATA_HOME").empty()) dir = environment("XDG_DATA_HOME") + "/factorwatch";
  if (dir.empty() && !environment("HOME").empty()) dir = environment("HOME") + "/.local/share/factorwatch";
  if (dir.empty())
    throw std::runtime_error("no data directory: give --data DIR or set FACTORWATCH_DATA (HOME is not set)");
  namespace fs = std::filesystem;
  std::error_code error;
  if (!fs::exists(dir, error)) {
    fs::create_directories(dir, error);
    if (error) throw std::runtime_error("cannot create the data directory " + dir + ": " + error.message());
    // Returns and models are the user's business: owner-only, like a private home file.
    fs::permissions(dir, fs::perms::owner_all, fs::perm_options::replace, error);
  } else if (!fs::is_directory(dir, error)) {
    throw std::runtime_error("the data directory " + dir + " exists but is not a directory");
  }
  return dir;
}

std::string database_path(const std::string& option) {
  return resolve_data_directory(option) + "/" + kDatabaseFileName;
}

}  // namespace factorwatch::storage
