// The daily log returns of R's datasets::EuStockMarkets (DAX, SMI, CAC, FTSE; 1859 days)
// as a panel: tests/reference/eustock_returns.csv, made by make_eustock.R. Dates are
// positional labels (the R series has no calendar).
#pragma once

#include <string>

#include "factorwatch/engine/panel.h"
#include "reference_table.h"

namespace factorwatch::testing {

inline engine::ReturnsPanel eustock_returns() {
  const ReferenceTable t = read_reference("eustock_returns.csv");
  engine::ReturnsPanel p;
  p.assets.assign(t.header.begin() + 1, t.header.end());
  p.values.resize(Eigen::Index(t.rows.size()), Eigen::Index(p.assets.size()));
  for (std::size_t r = 0; r < t.rows.size(); ++r) {
    p.dates.push_back(*engine::Date::from_iso(t.rows[r][0]));
    for (std::size_t c = 0; c < p.assets.size(); ++c)
      p.values(Eigen::Index(r), Eigen::Index(c)) = std::stod(t.rows[r][c + 1]);
  }
  return p;
}

}  // namespace factorwatch::testing
