// A model's calendar (pipeline/src/model_calendar.h): the stored dates its windows count
// are the ones on which enough of its universe traded. The rule is ours and stated there;
// these tests pin it down on counts, and end to end on two planted markets whose holidays
// differ.
#include <gtest/gtest.h>

#include <limits>
#include <set>

#include "factorwatch/pipeline/factor_returns.h"
#include "factorwatch/pipeline/refresh.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/returns_span.h"
#include "factorwatch/storage/windows.h"
#include "model_calendar.h"
#include "simulated_model.h"
#include "storage_fixtures.h"
#include "stored_returns.h"

namespace {

using namespace factorwatch;
namespace fw = factorwatch::testing;
using pipeline::detail::calendar_of;
using pipeline::detail::kCalendarLookback;

std::vector<storage::DateCount> counts_of(const std::vector<int>& assets) {
  const auto dates = fw::business_dates(static_cast<int>(assets.size()));
  std::vector<storage::DateCount> out;
  for (std::size_t t = 0; t < assets.size(); ++t) out.push_back({dates[t], assets[t]});
  return out;
}

// Positions (in `counts`) of the dates the rule keeps.
std::vector<int> kept(const std::vector<int>& assets) {
  const auto counts = counts_of(assets);
  std::vector<int> out;
  for (engine::Date d : calendar_of(counts))
    for (std::size_t t = 0; t < counts.size(); ++t)
      if (counts[t].date == d) out.push_back(static_cast<int>(t));
  return out;
}

TEST(ModelCalendar, ADateCountsWhenHalfAsManyAssetsTradedAsOnTheBusiestRecentDate) {
  // 30 assets: a holiday of the universe's market (0), a half day (15 = half, kept), a
  // thin date (14, left out), then back to normal.
  EXPECT_EQ(kept({30, 30, 0, 30, 15, 14, 30}), (std::vector<int>{0, 1, 3, 4, 6}));
  // The first stored date is its own busiest: kept whenever it has any asset.
  EXPECT_EQ(kept({1, 2, 4, 8}), (std::vector<int>{0, 1, 2, 3}));
  // A universe that grows (new listings) keeps every date; the date it doubles is the
  // busiest of its lookback.
  EXPECT_EQ(kept({10, 10, 25, 25, 25}), (std::vector<int>{0, 1, 2, 3, 4}));
}

TEST(ModelCalendar, TheBusiestDateIsLookedForOnlyInTheLookback) {
  // A universe that halves at once (more than half delisted on one date) loses the dates
  // whose lookback still holds a date of the larger universe, then counts again: the rule
  // compares with the last kCalendarLookback + 1 stored dates and never with later ones.
  std::vector<int> assets(5, 40);
  assets.resize(5 + kCalendarLookback + 3, 19);
  std::vector<int> want = {0, 1, 2, 3, 4};
  for (int t = 5 + static_cast<int>(kCalendarLookback); t < static_cast<int>(assets.size()); ++t) want.push_back(t);
  EXPECT_EQ(kept(assets), want);
  // Looking back only: what is kept of a prefix is kept of the whole (a date's place in
  // the calendar is settled when it is stored).
  std::vector<int> prefix(assets.begin(), assets.begin() + 12);
  const auto whole = kept(assets), part = kept(prefix);
  EXPECT_TRUE(std::equal(part.begin(), part.end(), whole.begin()));
}

// Two planted markets of ten assets each, on weekdays: the first closed on three dates the
// second traded (t = 30, 75, 76), the second closed on one (t = 50). A model of the first
// market's assets must count 252 - 3 dates, never the other market's days: its windows
// hold W dates of its own, the left-out dates are stored with the window, and its factor
// scores and residuals are read on the same dates. On the old rule (every stored date
// counts), the window as of date 119 held dates 60..119 with the holidays among them.
TEST(ModelCalendar, AModelOfOneMarketCountsOnlyItsOwnTradingDates) {
  fw::TempDir dir;
  constexpr int kT = 140, kN = 20, kW = 60;
  fw::PlantedModel m = fw::simulate_planted_model(kT, kN, 2, 20261205u);
  m.panel.dates = fw::business_dates(kT);
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const std::set<int> first_closed = {30, 75, 76};
  for (int t : first_closed)
    for (int i = 0; i < 10; ++i) m.panel.values(t, i) = nan;
  for (int i = 10; i < kN; ++i) m.panel.values(50, i) = nan;
  fw::write_long_csv(dir.file("r.csv"), m.panel);
  storage::Database db(dir.database());
  fw::load_returns(db, dir.file("r.csv"));

  storage::ModelConfig first;
  first.universe.assign(m.panel.assets.begin(), m.panel.assets.begin() + 10);
  first.fit.method = engine::Method::pca;
  first.fit.factors = 2;
  first.window = kW;
  first.step = 10;
  storage::set_model(db, "first", first);
  storage::ModelConfig all = first;
  all.universe.clear();  // every asset: on each holiday half the assets traded, so every date counts
  storage::set_model(db, "all", all);
  ASSERT_EQ(pipeline::refresh_model(db, "first").unusable, 0u);
  ASSERT_EQ(pipeline::refresh_model(db, "all").unusable, 0u);

  std::vector<engine::Date> own;  // the first market's trading dates
  for (int t = 0; t < kT; ++t)
    if (!first_closed.count(t)) own.push_back(m.panel.dates[static_cast<std::size_t>(t)]);
  const auto model = storage::find_model(db, "first");
  const auto windows = storage::list_windows(db, model->id);
  ASSERT_EQ(windows.size(), (own.size() - kW) / 10 + 1);  // grid on its own 137 dates: 8 windows
  for (std::size_t j = 0; j < windows.size(); ++j) {
    const std::size_t end = kW - 1 + 10 * j;
    EXPECT_EQ(windows[j].as_of, own[end]);
    EXPECT_EQ(windows[j].first_date, own[end + 1 - kW]);
    EXPECT_EQ(windows[j].periods, kW);
    const auto record = storage::read_window(db, model->id, windows[j].as_of, false);
    std::vector<engine::Date> skipped;
    for (int t : first_closed) {
      const engine::Date d = m.panel.dates[static_cast<std::size_t>(t)];
      if (d > windows[j].first_date && d < windows[j].as_of) skipped.push_back(d);
    }
    EXPECT_EQ(record->skipped_dates, skipped) << windows[j].as_of;
    // Residuals are read on the window's own dates.
    const auto residuals = pipeline::asset_residuals(db, model->id, windows[j].as_of, m.panel.assets[0],
                                                     engine::ScoreMethod::bartlett, false);
    ASSERT_TRUE(residuals.failure.empty()) << residuals.failure;
    EXPECT_EQ(residuals.dates, std::vector<engine::Date>(own.begin() + static_cast<std::ptrdiff_t>(end + 1 - kW),
                                                         own.begin() + static_cast<std::ptrdiff_t>(end + 1)));
  }
  // The fit saw exactly the first market's assets on its own dates.
  engine::ReturnsPanel expected;
  expected.assets = first.universe;
  expected.dates.assign(own.begin(), own.begin() + kW);
  expected.values.resize(kW, 10);
  for (int t = 0, row = 0; t < kT && row < kW; ++t)
    if (!first_closed.count(t)) expected.values.row(row++) = m.panel.values.row(t).head(10);
  EXPECT_EQ(storage::read_window(db, model->id, own[kW - 1], false)->input_hash, storage::panel_fingerprint(expected));

  // Every asset: every stored date counts.
  const auto every = storage::list_windows(db, storage::find_model(db, "all")->id);
  ASSERT_FALSE(every.empty());
  EXPECT_EQ(every.front().as_of, m.panel.dates[kW - 1]);
  EXPECT_TRUE(storage::read_window(db, storage::find_model(db, "all")->id, every.back().as_of, false)->skipped_dates.empty());
}

}  // namespace
