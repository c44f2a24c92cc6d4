// The one date type (engine::Date): parsed once where a date enters, its day count for the
// engine, its INTEGER yyyymmdd key for storage, its text where it leaves.
#include <gtest/gtest.h>

#include <stdexcept>
#include <string>

#include "factorwatch/engine/frequency.h"
#include "factorwatch/storage/damaged_data.h"
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
  for (const auto& c : cases) {
    const auto d = engine::Date::from_iso(c.date);
    ASSERT_TRUE(d) << c.date;
    EXPECT_EQ(d->days(), c.days) << c.date;
    EXPECT_EQ(d->iso(), c.date);                                       // text round trip
    EXPECT_EQ(engine::Date::from_key(d->key()), d) << c.date;          // key round trip
    EXPECT_EQ(engine::Date::from_days(static_cast<std::int32_t>(c.days)), *d) << c.date;
  }
  EXPECT_EQ(engine::Date::from_iso("2024-02-29")->key(), 20240229);
}

// Keys order as the dates do (the SQL indexes rely on it), and every day of four centuries
// (1900-01-01 .. 2299-12-31, leap rules of 1900, 2000 and 2100 included) converts both ways.
TEST(DateKey, EveryDayOfFourCenturiesRoundTripsAndKeysAscend) {
  const engine::Date first = *engine::Date::from_iso("1900-01-01"), last = *engine::Date::from_iso("2299-12-31");
  std::int32_t previous_key = 0;
  for (std::int32_t n = first.days(); n <= last.days(); ++n) {
    const engine::Date d = engine::Date::from_days(n);
    ASSERT_GT(d.key(), previous_key) << d;
    previous_key = d.key();
    ASSERT_EQ(engine::Date::from_iso(d.iso()), d);
    ASSERT_EQ(engine::Date::from_key(d.key()), d);
  }
  // 146097 days in 400 Gregorian years (common practice: the calendar's cycle).
  EXPECT_EQ(engine::days_between(first, last) + 1, 146097);
  EXPECT_FALSE(engine::Date::from_iso("1900-02-29"));  // 1900 was not a leap year
  EXPECT_TRUE(engine::Date::from_iso("2000-02-29"));
  EXPECT_FALSE(engine::Date::from_iso("2100-02-29"));
}

// A stored key that names no day is damaged data, never served as some other date.
TEST(DateKey, AStoredKeyThatIsNoDayIsDamagedData) {
  for (std::int64_t bad : {0LL, 20240230LL, 20241301LL, 2024010LL, 100000101LL, -20240101LL})
    EXPECT_THROW(storage::stored_date(bad), storage::DamagedData) << bad;
  EXPECT_EQ(storage::stored_date(20240229), engine::Date::from_iso("2024-02-29"));
  EXPECT_EQ(storage::key_text(20240230), "date key 20240230");
}

// The engine once took ISO text for a window's span and read a string shorter than ten
// characters as day 0 (a span of decades: "annual" data). Text is now parsed once, by
// engine::Date::from_iso, which refuses anything that is not a real yyyy-mm-dd date.
TEST(DateKey, MalformedDatesAreRefusedNotTakenAsDayZero) {
  for (const char* bad : {"", "2024-1-5", "2024-01-5", "20240105", "2024-02-30", "2023-02-29", "2024-13-01",
                          "2024-00-10", "0000-01-01", "10000-01-01", "2024/01/05", "2024-01-05x", " 2024-01-05",
                          "2024-01-05 ", "+024-01-05", "2024-0a-05"})
    EXPECT_FALSE(engine::Date::from_iso(bad)) << "'" << bad << "'";
}

// The classification by the typical gap between dates (frequency.h; the calendar spans
// of the windows below are counted by days_between): 504 business days span about 705
// calendar days (a gap of 1.4), weekly data 7, month ends about 30.4, quarter ends 91.
// 12 periods a year for monthly data, like 252 for daily: common practice.
TEST(DateKey, WindowSpansGiveTheFrequency) {
  const auto gap = [](const char* first, const char* last, int dates) {
    return static_cast<double>(engine::days_between(*engine::Date::from_iso(first), *engine::Date::from_iso(last))) /
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
