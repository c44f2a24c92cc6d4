// The caution every surface that shows risk numbers carries (CLI, JSON, CSV, web, README).
#pragma once

namespace factorwatch::engine {

inline constexpr const char* kCaution =
    "Statistical estimates from past returns, not investment advice; past co-movement "
    "is no guarantee of future co-movement. Decisions belong with you and your licensed "
    "advisers.";

}  // namespace factorwatch::engine
