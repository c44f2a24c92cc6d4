// Turning a panel of prices into returns between consecutive dates of the file.
#pragma once

#include <string>

#include "cell_lines.h"
#include "factorwatch/engine/panel.h"

namespace factorwatch::storage::detail {

// `prices`: dates ascending, every present price > 0 (checked while reading). Returns the
// panel of returns on dates 2..T: simple p_t / p_{t-1} - 1 or log(p_t / p_{t-1}), missing
// unless both prices are present. Throws InputError for a file with a single date and
// for a price ratio outside (0, 1 + kLargestReturn], naming the later price's line and
// asset column.
engine::ReturnsPanel prices_to_returns(const engine::ReturnsPanel& prices, bool log_returns,
                                       const std::string& path, const CellLines& lines,
                                       const std::string& date_column);

}  // namespace factorwatch::storage::detail
