// A hint to the kernel, not I/O: back a large buffer that is about to be written for
// the first time with transparent huge pages where the system allows them on request
// (Linux "madvise" mode). On the 2-core VM of docs/performance.md, writing a fresh
// 40 MB buffer costs 110 ms in 4 KiB page faults and 3-10 ms in 2 MiB pages; the
// prepared panel is such a buffer in every fit.
#pragma once

#include <cstddef>

namespace factorwatch::engine::detail {

// Advises the whole 2 MiB pages inside [data, data + bytes); a no-op for small
// buffers, on other systems, or when the kernel refuses. Call before the first write.
void advise_huge_pages(void* data, std::size_t bytes);

}  // namespace factorwatch::engine::detail
