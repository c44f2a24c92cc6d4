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

// Writes `token` to a new owner-only file beside `path` and returns its name. The name
// is new (random) and opened with O_EXCL | O_NOFOLLOW, so a file or symbolic link planted
// in the data directory is never written through. On any failure (a full disk, a
// failing fsync) the file is removed, so no empty or partial token file is left.
std::string write_temporary(const std::string& path, const std::string& token) {
  const std::string temporary = path + ".new-" + new_token().substr(0, 16);
  const int fd = ::open(temporary.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_NOFOLLOW | O_CLOEXEC, 0600);
  if (fd < 0) fail(temporary, "cannot create");
  const std::string line = token + "\n";
  errno = 0;
  bool ok = ::fchmod(fd, 0600) == 0 &&
            ::write(fd, line.data(), line.size()) == static_cast<ssize_t>(line.size()) && ::fsync(fd) == 0;
  int error = errno;
  if (::close(fd) != 0 && ok) ok = false, error = errno;
  if (!ok) {
    ::unlink(temporary.c_str());
    errno = error != 0 ? error : ENOSPC;  // a short write sets no errno: the disk is full
    fail(path, "cannot write");
  }
  return temporary;
}

// So that a new name survives a power cut once it is used (rename and link are
// directory changes).
void sync_directory(const std::string& path) {
  const auto slash = path.rfind('/');
  const std::string dir = slash == std::string::npos ? "." : (slash == 0 ? "/" : path.substr(0, slash));
  const int fd = ::open(dir.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (fd < 0) return;
  ::fsync(fd);
  ::close(fd);
}

// Writes a token file whole or not at all; false when `path` already exists (first start
// of two processes at once: the other one's token stands).
bool write_new_file(const std::string& path, const std::string& token) {
  const std::string temporary = write_temporary(path, token);
  const bool linked = ::link(temporary.c_str(), path.c_str()) == 0;
  const int error = errno;
  ::unlink(temporary.c_str());
  if (!linked) {
    if (error == EEXIST) return false;
    errno = error;
    fail(path, "cannot create");
  }
  sync_directory(path);
  return true;
}

std::string read_token(const std::string& path) {
  // Not through a symbolic link: one planted in the data directory would make the daemon
  // accept a token of someone else's choosing.
  const int fd = ::open(path.c_str(), O_RDONLY | O_NOFOLLOW | O_CLOEXEC);
  if (fd < 0 && errno == ELOOP)
    throw std::runtime_error(path + ": is a symbolic link, refused; replace it with: factorwatch token --renew");
  std::FILE* f = fd < 0 ? nullptr : ::fdopen(fd, "r");
  if (!f) {
    if (fd >= 0) ::close(fd);
    fail(path, "cannot read");
  }
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
  struct stat existing {};
  if (::lstat(path.c_str(), &existing) != 0) write_new_file(path, new_token());  // no-op when it appears meanwhile
  struct stat info {};
  if (::stat(path.c_str(), &info) == 0 && (info.st_mode & 077) != 0)
    std::fprintf(stderr, "warning: %s can be read by other users; chmod 600 it or renew the token\n", path.c_str());
  return read_token(path);
}

std::string renew_token(const std::string& path) {
  const std::string token = new_token();
  const std::string temporary = write_temporary(path, token);
  if (::rename(temporary.c_str(), path.c_str()) != 0) {
    const int error = errno;
    ::unlink(temporary.c_str());
    errno = error;
    fail(path, "cannot replace");
  }
  sync_directory(path);
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
