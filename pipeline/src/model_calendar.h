// A model's calendar: the stored dates its windows count (refresh.h, "The calendar").
//
// Stored dates are the union of every loaded market's trading days. A model whose universe
// trades on one market must not count a date on which only other markets traded (a
// holiday of its own exchange, a file of another region that arrived first): its window
// would hold a row of gaps, and "W dates" would be fewer real ones. The rule, ours: a
// stored date is in the model's calendar when at least half as many of the model's
// universe assets have a return on it as on the busiest of that date and the
// kCalendarLookback stored dates before it. Looking back only, a date's place in the
// calendar is settled when it is stored and does not change as later dates arrive; the
// busiest recent date follows a universe that grows or shrinks over the years.
#pragma once

#include <cstdint>
#include <vector>

#include "factorwatch/engine/date.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/returns_span.h"

namespace factorwatch::pipeline::detail {

// About a month of trading days: long enough that a run of holidays in the universe's
// market (four days at most, common practice) always has a full trading day behind it.
inline constexpr std::size_t kCalendarLookback = 20;

// The rule above on counts of every stored date (ascending).
std::vector<engine::Date> calendar_of(const std::vector<storage::DateCount>& counts);

// The calendar of a universe: `universe` ids (ascending), empty for every stored asset.
std::vector<engine::Date> model_calendar(storage::Database& db, const std::vector<std::int32_t>& universe);

// The dates a stored window holds: the stored dates from its first to its as-of date,
// less the ones it skipped.
std::vector<engine::Date> window_dates(const std::vector<engine::Date>& stored, engine::Date first, engine::Date as_of,
                                       const std::vector<engine::Date>& skipped);

}  // namespace factorwatch::pipeline::detail
