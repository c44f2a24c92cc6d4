// The demo universe's business-day calendar, on the program's one date type
// (engine::Date): Monday to Friday, no holidays.
#pragma once

#include <vector>

#include "factorwatch/engine/date.h"

namespace factorwatch::demo {

// Monday-to-Friday dates (no holidays) from the first business day on or after `start` up
// to, not including, the same month and day `years` later, ascending. A 29 February start
// ends on 1 March of a common end year.
std::vector<engine::Date> business_days(engine::Date start, int years);

}  // namespace factorwatch::demo
