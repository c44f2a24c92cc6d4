#include "file_text.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
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

[[noreturn]] void too_large(const std::string& path, std::size_t max_bytes) {
  const std::string limit = max_bytes % (1u << 20) == 0 ? std::to_string(max_bytes >> 20) + " MiB"
                                                        : std::to_string(max_bytes) + " bytes";
  throw InputError(path, 0, "",
                   "the file is larger than the limit of " + limit +
                       " for an input file (for returns files, factorwatch load --max-input-mb sets it)");
}

// The first NUL in text[from, end), reported with its line and column counted from the start.
void check_range(std::string_view text, std::size_t from, const std::string& path) {
  const void* found = std::memchr(text.data() + from, '\0', text.size() - from);
  if (found == nullptr) return;
  const std::size_t at = static_cast<std::size_t>(static_cast<const char*>(found) - text.data());
  const std::string_view before = text.substr(0, at);
  const std::size_t line = static_cast<std::size_t>(std::count(before.begin(), before.end(), '\n')) + 1;
  const std::size_t line_start = before.rfind('\n') == std::string_view::npos ? 0 : before.rfind('\n') + 1;
  throw InputError(path, line, "",
                   "a NUL byte (0x00) at column " + std::to_string(at - line_start + 1) +
                       ": input files are UTF-8 text, which never holds one; this is a binary file, or text "
                       "saved as UTF-16 (\"Unicode text\"): save it as UTF-8");
}

}  // namespace

void check_no_nul(std::string_view text, const std::string& path) { check_range(text, 0, path); }

FileText::FileText(const std::string& path, std::size_t max_bytes) {
  Descriptor file{::open(path.c_str(), O_RDONLY | O_CLOEXEC)};
  if (file.fd < 0) fail(path, "cannot open");
  struct stat info {};
  if (::fstat(file.fd, &info) != 0) fail(path, "cannot read");
  if (S_ISDIR(info.st_mode)) throw InputError(path, 0, "", "is a directory, not a file");
  const bool regular = S_ISREG(info.st_mode);
  if (regular && static_cast<std::uintmax_t>(info.st_size) > max_bytes) too_large(path, max_bytes);

  // Regular files: one buffer of the known size. Pipes, or a file that grew meanwhile:
  // append chunks (amortised growth), so a big regular file is never held twice. Each
  // read is checked for NUL bytes and the total against the limit as it arrives, so that
  // /dev/zero or an endless pipe is refused after its first chunk or at the limit.
  bytes_.resize(regular ? static_cast<std::size_t>(info.st_size) : 0);
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
    const auto n = static_cast<std::size_t>(got);
    if (n > max_bytes - used) too_large(path, max_bytes);
    if (!into_buffer) bytes_.append(chunk, n);
    check_range(std::string_view(bytes_.data(), used + n), used, path);
    used += n;
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
