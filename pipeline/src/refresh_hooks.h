// A seam for tests: what a refresh calls at the points where another process may change
// the database under it, so that a test can make that happen deterministically (a load
// committing between the refresh's read of the returns and its writes) instead of
// racing two processes. Empty in every program; not thread-safe (set before a refresh).
#pragma once

#include <functional>

namespace factorwatch::pipeline::detail {

struct RefreshHooks {
  std::function<void()> before_read;  // the plan is made; its span of returns not read yet
  std::function<void()> after_read;   // a span of returns has been read; no window of it written yet
};

RefreshHooks& refresh_hooks();

}  // namespace factorwatch::pipeline::detail
