// Factor returns as CSV, JSON and a terminal table: the series across windows (each
// window's as-of date) and every date of one window. The same CSV and JSON from
// `factorwatch factor-returns` and from GET .../factor-returns. Every output names the
// scoring method and carries the caution (CSV and JSON first, the table last).
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "factorwatch/pipeline/factor_returns_query.h"

namespace factorwatch::server {

// A spreadsheet time series: the caution line, one heading comment line (model, method,
// basis), one header row as_of,first_date,alignment,f1..fk,assets_used,reason, then one
// row per window in the range by as-of date; a skipped window has only as_of and reason,
// a date that could not be scored empty factor cells and the reason.
std::string factor_return_series_csv(const pipeline::FactorReturnSeriesAnswer& answer);
// {caution, model, version, method, description, factor_basis, factors, from, to,
//  rows: [{as_of, first_date, alignment, factor_returns, assets_used, reason}], skipped: [{as_of, reason}]}.
nlohmann::ordered_json factor_return_series_json(const pipeline::FactorReturnSeriesAnswer& answer);
std::string factor_return_series_table(const pipeline::FactorReturnSeriesAnswer& answer);

// The caution line, one heading comment line (model, window, method, basis, note), the
// header row date,f1..fk,assets_used,reason, one row per date of the window.
std::string window_factor_returns_csv(const pipeline::WindowFactorReturns& answer);
// {caution, model, version, as_of, first_date, stale, note?, method, description,
//  factor_basis, factors, modelled_assets, dates: [{date, factor_returns, assets_used, reason}]}.
nlohmann::ordered_json window_factor_returns_json(const pipeline::WindowFactorReturns& answer);
std::string window_factor_returns_table(const pipeline::WindowFactorReturns& answer);

}  // namespace factorwatch::server
