#include "page_hint.h"

#include <cstdint>

#if defined(__linux__)
#include <sys/mman.h>
#endif

namespace factorwatch::engine::detail {

void advise_huge_pages(void* data, std::size_t bytes) {
#if defined(__linux__) && defined(MADV_HUGEPAGE)
  constexpr std::uintptr_t kHuge = std::uintptr_t(2) << 20;
  const std::uintptr_t begin = (reinterpret_cast<std::uintptr_t>(data) + kHuge - 1) & ~(kHuge - 1);
  const std::uintptr_t end = (reinterpret_cast<std::uintptr_t>(data) + bytes) & ~(kHuge - 1);
  // Below a few huge pages the gain is nil; the hint's failure changes nothing but speed.
  if (end > begin && end - begin >= 4 * kHuge)
    (void)madvise(reinterpret_cast<void*>(begin), end - begin, MADV_HUGEPAGE);
#else
  (void)data;
  (void)bytes;
#endif
}

}  // namespace factorwatch::engine::detail
