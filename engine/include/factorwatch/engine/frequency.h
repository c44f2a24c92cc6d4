// How many periods a year a window's dates represent, for square-root-of-time
// annualisation (volatility x sqrt(periods per year); common practice).
#pragma once

namespace factorwatch::engine {

struct Frequency {
  const char* name = "daily";   // daily | weekly | monthly | quarterly | annual
  int periods_per_year = 252;   // 252 trading days, 52 weeks, 12 months (common practice)
};

// From the typical calendar gap between dates, e.g. a window's span in calendar days
// divided by its number of gaps: up to 4 days daily (a weekend is 3), up to 10 weekly, up
// to 45 monthly, up to 120 quarterly, else annual. The engine takes day counts, never
// date text: dates are parsed once, where they enter (date.h).
Frequency frequency_from_gap(double days);

}  // namespace factorwatch::engine
