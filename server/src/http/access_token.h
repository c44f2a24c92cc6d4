// The daemon's bearer token: 64 hex digits (256 random bits) in the file `access-token`
// of the data directory, owner-only (0600), created on the daemon's first start or by
// `factorwatch token`. Writes need it; reads too when the daemon is told so.
#pragma once

#include <ctime>
#include <mutex>
#include <string>
#include <string_view>

namespace factorwatch::server {

inline constexpr const char* kTokenFileName = "access-token";

// The token file of a data directory.
std::string token_path(const std::string& data_dir);

// Reads the token, creating the file first when it does not exist. Throws
// std::runtime_error naming the file when it cannot be read or written, holds no token,
// or is a symbolic link. The file is written whole under a new name (O_EXCL, O_NOFOLLOW,
// 0600, fsync) and then linked into place, so a failed write (a full disk) leaves no
// token file and the next start makes one.
std::string ensure_token(const std::string& path);

// Replaces the token with a new one (atomically: a new file, written as above, renamed
// over the old).
std::string renew_token(const std::string& path);

// Compares in time that does not depend on where the two differ.
bool same_token(std::string_view a, std::string_view b);

// The token as the daemon checks it: read again whenever the file changes, so that
// `factorwatch token --renew` takes effect without a restart.
class TokenGuard {
 public:
  explicit TokenGuard(std::string path);
  // True when `authorization` is "Bearer <the token>".
  bool accepts(std::string_view authorization);

 private:
  std::string path_;
  std::mutex mutex_;
  std::string token_;
  struct timespec modified_ {};
  long long size_ = -1;
};

}  // namespace factorwatch::server
