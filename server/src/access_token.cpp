#include "access_token.h"

#include <fcntl.h>
#include <sys/random.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cctype>
#include <cerrno>
#include <cstdio>
#include <cstring>
#include <stdexcept>

namespace factorwatch::server {
namespace {

[[noreturn]] void fail(const std::string& path, const char* what) {
  throw std::runtime_error(path + ": " + what + ": " + std::strerror(errno));
}

std::string new_token() {
  unsigned char bytes[32];
  std::size_t got = 0;
  while (got < sizeof bytes) {
    const ssize_t n = ::getrandom(bytes + got, sizeof bytes - got, 0);
    if (n < 0) {
      if (errno == EINTR) continue;
      throw std::runtime_error(std::string("no random bytes for the token: ") + std::strerror(errno));
    }
    got += static_cast<std::size_t>(n);
  }
  static const char* hex = "0123456789abcdef";
  std::string token;
  for (unsigned char b : bytes) {
    token += hex[b >> 4];
    token += hex[b & 15];
  }
  return token;
}

// Writes `token` to a new owner-only file; false when the file already exists.
bool write_new_file(const std::string& path, const std::string& token, bool exclusive) {
  const int fd = ::open(path.c_str(), O_WRONLY | O_CREAT | O_CLOEXEC | (exclusive ? O_EXCL : O_TRUNC), 0600);
  if (fd < 0) {
    if (exclusive && errno == EEXIST) return false;
    fail(path, "cannot create");
  }
  const std::string line = token + "\n";
  const bool ok = ::write(fd, line.data(), line.size()) == static_cast<ssize_t>(line.size()) && ::fsync(fd) == 0;
  ::close(fd);
  if (!ok) fail(path, "cannot write");
  return true;
}

std::string read_token(const std::string& path) {
  std::FILE* f = std::fopen(path.c_str(), "re");
  if (!f) fail(path, "cannot read");
  char text[256] = {};
  const std::size_t n = std::fread(text, 1, sizeof text - 1, f);
  std::fclose(f);
  std::string token(text, n);
  while (!token.empty() && (token.back() == '\n' || token.back() == '\r' || token.back() == ' ')) token.pop_back();
  if (token.size() < 32) throw std::runtime_error(path + ": holds no token; renew it with: factorwatch token --renew");
  return token;
}

}  // namespace

std::string token_path(const std::string& data_dir) { return data_dir + "/" + kTokenFileName; }

std::string ensure_token(const std::string& path) {
  write_new_file(path, new_token(), true);  // no-op when it exists
  struct stat info {};
  if (::stat(path.c_str(), &info) == 0 && (info.st_mode & 077) != 0)
    std::fprintf(stderr, "warning: %s can be read by other users; chmod 600 it or renew the token\n", path.c_str());
  return read_token(path);
}

std::string renew_token(const std::string& path) {
  const std::string token = new_token();
  const std::string temporary = path + ".new";
  write_new_file(temporary, token, false);
  if (::rename(temporary.c_str(), path.c_str()) != 0) fail(path, "cannot replace");
  return token;
}

bool same_token(std::string_view a, std::string_view b) {
  unsigned char differ = a.size() == b.size() ? 0 : 1;
  const std::size_t n = std::min(a.size(), b.size());
  for (std::size_t i = 0; i < n; ++i) differ |= static_cast<unsigned char>(a[i] ^ b[i]);
  return differ == 0;
}

TokenGuard::TokenGuard(std::string path) : path_(std::move(path)) {}

bool TokenGuard::accepts(std::string_view authorization) {
  constexpr std::string_view kScheme = "Bearer ";
  if (authorization.size() <= kScheme.size()) return false;
  // The scheme name is case-insensitive (RFC 9110, section 11.1).
  for (std::size_t i = 0; i < kScheme.size(); ++i)
    if (std::tolower(static_cast<unsigned char>(authorization[i])) != std::tolower(static_cast<unsigned char>(kScheme[i])))
      return false;
  std::string_view presented = authorization.substr(kScheme.size());
  while (!presented.empty() && presented.front() == ' ') presented.remove_prefix(1);
  while (!presented.empty() && presented.back() == ' ') presented.remove_suffix(1);

  std::lock_guard<std::mutex> lock(mutex_);
  struct stat info {};
  if (::stat(path_.c_str(), &info) != 0) return false;  // no token file: nobody can write
  if (info.st_mtim.tv_sec != modified_.tv_sec || info.st_mtim.tv_nsec != modified_.tv_nsec ||
      info.st_size != size_ || token_.empty()) {
    try {
      token_ = read_token(path_);
    } catch (const std::exception&) {
      token_.clear();
      return false;
    }
    modified_ = info.st_mtim;
    size_ = info.st_size;
  }
  return same_token(presented, token_);
}

}  // namespace factorwatch::server
