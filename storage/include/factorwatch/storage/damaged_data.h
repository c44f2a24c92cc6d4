// Stored data that fails its checksum or its size checks: a damaged database file (a
// flipped bit on disk, a row edited by hand), not a bad request. The message names the
// table and the row (model and window, or returns date) so that `factorwatch verify` and
// the daemon can say what to restore or refit.
#pragma once

#include <stdexcept>
#include <string>

namespace factorwatch::storage {

class DamagedData : public std::runtime_error {
 public:
  explicit DamagedData(const std::string& what) : std::runtime_error(what) {}
};

}  // namespace factorwatch::storage
