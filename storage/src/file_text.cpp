#include "file_text.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>

#include "factorwatch/storage/input_error.h"

namespace factorwatch::storage::detail {
namespace {

// Closes the descriptor on every path out, including exceptions.
struct Descriptor {
  int fd;
  ~Descriptor() {
    if (fd >= 0) ::close(fd);
  }
};

[[noreturn]] void fail(const std::string& path, const char* what) {
  throw InputError(path, 0, "", std::string(what) + ": " + std::strerror(errno));
}

}  // namespace

FileText::FileText(const std::string& path) {
  Descriptor file{::open(path.c_str(), O_RDONLY | O_CLOEXEC)};
  if (file.fd < 0) fail(path, "cannot open");
  struct stat info {};
  if (::fstat(file.fd, &info) != 0) fail(path, "cannot read");
  if (S_ISDIR(info.st_mode)) throw InputError(path, 0, "", "is a directory, not a file");

  // Regular files: one buffer of the known size. Pipes, or a file that grew meanwhile:
  // append chunks (amortised growth), so a big regular file is never held twice.
  bytes_.resize(S_ISREG(info.st_mode) ? static_cast<std::size_t>(info.st_size) : 0);
  std::size_t used = 0;
  char chunk[1 << 16];
  for (;;) {
    bool into_buffer = used < bytes_.size();
    char* target = into_buffer ? bytes_.data() + used : chunk;
    std::size_t room = into_buffer ? bytes_.size() - used : sizeof chunk;
    ssize_t got = ::read(file.fd, target, room);
    if (got < 0) {
      if (errno == EINTR) continue;
      fail(path, "cannot read");
    }
    if (got == 0) break;
    if (!into_buffer) bytes_.append(chunk, static_cast<std::size_t>(got));
    used += static_cast<std::size_t>(got);
  }
  bytes_.resize(used);
}

std::string_view FileText::text() const {
  std::string_view all(bytes_);
  constexpr std::string_view kBom = "\xEF\xBB\xBF";
  if (all.substr(0, kBom.size()) == kBom) all.remove_prefix(kBom.size());
  return all;
}

}  // namespace factorwatch::storage::detail
