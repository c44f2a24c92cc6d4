// A risk report as JSON, CSV and a terminal table: shared by `factorwatch risk` and the
// daemon. JSON and CSV carry the caution; the table ends with it.
//
// CSV is one long table a spreadsheet can filter and pivot: one row per book (portfolio,
// benchmark, active, after_trade, active_after_trade) and part (total, systematic,
// specific, factor, asset, not_modelled).
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "factorwatch/pipeline/risk_query.h"

namespace factorwatch::server {

struct RiskViewOptions {
  bool by_asset = true;  // JSON and CSV: one entry per modelled holding
  int limit = 10;        // table: assets shown per book, largest contributions first (0: all)
};

nlohmann::ordered_json risk_json(const pipeline::RiskReport& report, const RiskViewOptions& options = {});
std::string risk_csv(const pipeline::RiskReport& report, const RiskViewOptions& options = {});
std::string risk_table(const pipeline::RiskReport& report, const RiskViewOptions& options = {});

}  // namespace factorwatch::server
