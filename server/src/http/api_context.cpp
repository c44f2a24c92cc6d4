#include "api_context.h"

#include <memory>

namespace factorwatch::server {

storage::Database& ApiContext::database() const {
  thread_local std::unique_ptr<storage::Database> connection;
  thread_local std::string opened_path;
  if (!connection || opened_path != database_path) {
    connection = std::make_unique<storage::Database>(database_path);
    opened_path = database_path;
  }
  return *connection;
}

}  // namespace factorwatch::server
