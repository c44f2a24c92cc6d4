// Dates as storage keeps them (INTEGER yyyymmdd) and the day counts the engine takes in
// their place: parsed once where they enter, never guessed from text further down.
#include <gtest/gtest.h>

#include <stdexcept>
#include <string>

#include "factorwatch/engine/frequency.h"
#include "factorwatch/storage/date_key.h"

namespace {

using namespace factorwatch;

// Days since 1970-01-01. Reference: numpy 1.24.2 (Debian),
// numpy.datetime64(d, 'D').astype(numpy.int64) for each date.
TEST(DateKey, DayCountsMatchNumpy) {
  const struct {
    const char* date;
    long days;
  } cases[] = {{"1970-01-01", 0},     {"1969-12-31", -1},        {"2000-02-29", 11016},
               {"2000-03-01", 11017}, {"1900-03-01", -25508},    {"2024-12-31", 20088},
               {"0001-01-01", -719162}, {"9999-12-31", 2932896}};
  for (const auto& c : cases) EXPECT_EQ(storage::day_count(storage::date_key(c.date)), c.days) << c.date;
}

// The engine once took ISO text for a window's span and read a string shorter than ten
// characters as day 0 (a span of decades: "annual" data). Text is now parsed once, by
// date_key, which refuses anything that is not a real yyyy-mm-dd date.
TEST(DateKey, MalformedDatesAreRefusedNotTakenAsDayZero) {
  for (const char* bad : {"", "2024-1-5", "2024-01-5", "20240105", "2024-02-30", "2023-02-29", "2024-13-01",
                          "2024-00-10", "0000-01-01", "2024/01/05", "2024-01-05x"})
    EXPECT_THROW(storage::date_key(bad, "as-of date"), std::invalid_argument) << "'" << bad << "'";
  try {
    storage::date_key("2024-1-5", "as-of date");
  } catch (const std::invalid_argument& e) {
    EXPECT_NE(std::string(e.what()).find("as-of date"), std::string::npos) << e.what();
  }
}

// The classification by the typical gap between dates (frequency.h; the calendar spans
// of the windows below are counted by day_count): 504 business days span about 705
// calendar days (a gap of 1.4), weekly data 7, month ends about 30.4, quarter ends 91.
// 12 periods a year for monthly data, like 252 for daily: common practice.
TEST(DateKey, WindowSpansGiveTheFrequency) {
  const auto gap = [](const char* first, const char* last, int dates) {
    return static_cast<double>(storage::day_count(storage::date_key(last)) -
                               storage::day_count(storage::date_key(first))) /
           (dates - 1);
  };
  EXPECT_STREQ(engine::frequency_from_gap(gap("2023-01-02", "2024-12-06", 504)).name, "daily");  // business days
  EXPECT_STREQ(engine::frequency_from_gap(gap("2024-01-05", "2024-12-27", 52)).name, "weekly");
  EXPECT_STREQ(engine::frequency_from_gap(gap("2020-01-31", "2024-12-31", 60)).name, "monthly");
  EXPECT_EQ(engine::frequency_from_gap(gap("2020-01-31", "2024-12-31", 60)).periods_per_year, 12);
  EXPECT_STREQ(engine::frequency_from_gap(gap("2015-03-31", "2024-12-31", 40)).name, "quarterly");
  EXPECT_STREQ(engine::frequency_from_gap(gap("2000-12-31", "2024-12-31", 25)).name, "annual");
}

}  // namespace
