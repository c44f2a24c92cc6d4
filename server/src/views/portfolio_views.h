// Stored portfolios as JSON, CSV and text: shared by `factorwatch portfolio` and the
// daemon. Holdings are inputs, not risk figures; they carry no caution.
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "factorwatch/storage/portfolios.h"

namespace factorwatch::server {

nlohmann::ordered_json portfolio_list_json(const std::vector<storage::PortfolioSummary>& portfolios);
std::string portfolio_list_csv(const std::vector<storage::PortfolioSummary>& portfolios);

// One portfolio's holdings for one as-of date, with the weights' sums and every stored date.
nlohmann::ordered_json portfolio_json(const storage::Portfolio& p, const std::vector<engine::Date>& dates);
std::string portfolio_csv(const storage::Portfolio& p);  // asset,weight: a file `portfolio set` reads back

// What was stored, in words and as JSON: the sums the weights add up to, and how many
// holdings name assets without stored returns.
std::string stored_portfolio_text(const storage::Portfolio& p, const storage::SavePortfolioOutcome& outcome);
nlohmann::ordered_json stored_portfolio_json(const storage::Portfolio& p, const storage::SavePortfolioOutcome& outcome);

}  // namespace factorwatch::server
