#include "portfolio_endpoints.h"

#include "endpoint_helpers.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/portfolios.h"
#include "portfolio_views.h"

namespace factorwatch::server {
namespace {

ApiResponse unknown_portfolio(const ApiRequest& r, const std::string& name, std::optional<engine::Date> as_of) {
  return problem(404,
                 "no portfolio named '" + name + "'" + (as_of ? " with holdings at or before " + as_of->iso() : "") +
                     " (GET /v1/portfolios lists them)",
                 r.path, as_of ? "as_of" : "name");
}

}  // namespace

ApiResponse list_portfolios_endpoint(const ApiContext& context, const ApiRequest& r) {
  const auto format = negotiate_format(r);
  if (const auto* p = std::get_if<ApiResponse>(&format)) return *p;
  const auto portfolios = storage::list_portfolios(context.database());
  if (std::get<Format>(format) == Format::csv)
    return csv_response(portfolio_list_csv(portfolios), "portfolios.csv", false);
  return json_response(portfolio_list_json(portfolios));
}

ApiResponse show_portfolio_endpoint(const ApiContext& context, const ApiRequest& r) {
  const auto format = negotiate_format(r);
  if (const auto* p = std::get_if<ApiResponse>(&format)) return *p;
  std::optional<engine::Date> as_of;
  if (auto bad = date_parameter(r, "as_of", as_of)) return *bad;
  const std::string& name = r.path_values.at("name");
  storage::Database& db = context.database();
  const auto portfolio = storage::read_portfolio(db, name, as_of);
  if (!portfolio) return unknown_portfolio(r, name, as_of);
  if (std::get<Format>(format) == Format::csv)
    return csv_response(portfolio_csv(*portfolio),
                        name + "-" + portfolio->as_of.iso() + ".csv", false);
  return json_response(portfolio_json(*portfolio, storage::portfolio_dates(db, name)));
}

ApiResponse store_portfolio_endpoint(const ApiContext& context, const ApiRequest& r) {
  const std::string& name = r.path_values.at("name");
  const char* kNameRule = "': use 1 to 64 letters, digits, '.', '_' or '-'";
  if (!storage::is_portfolio_name(name)) return problem(400, "portfolio name '" + name + kNameRule, r.path, "name");
  std::optional<engine::Date> as_of;
  if (auto bad = date_parameter(r, "as_of", as_of)) return *bad;
  const std::string benchmark = r.parameter("benchmark").value_or("");
  if (!benchmark.empty() && !storage::is_portfolio_name(benchmark))
    return problem(400, "query parameter 'benchmark': '" + benchmark + kNameRule, r.path, "benchmark");
  if (benchmark == name)
    return problem(400, "query parameter 'benchmark': a portfolio cannot be its own benchmark", r.path, "benchmark");
  std::string label = r.upload_name.empty() ? "request body" : r.upload_name;
  if (const auto slash = label.find_last_of("/\\"); slash != std::string::npos) label = label.substr(slash + 1);
  storage::Portfolio portfolio;
  try {
    portfolio = storage::parse_portfolio_text(std::string(r.body), label,
                                              {name, as_of, benchmark});
  } catch (const storage::InputError& e) {
    return rejected_upload(r, e);
  } catch (const std::invalid_argument& e) {
    return problem(400, e.what(), r.path, "", {{"database", "unchanged"}});
  }
  portfolio.source = label == "request body" ? "HTTP upload" : "HTTP upload " + label;
  storage::Database& db = context.database();
  const storage::SavePortfolioOutcome outcome = storage::save_portfolio(db, portfolio);
  nlohmann::ordered_json j = stored_portfolio_json(portfolio, outcome);
  if (!portfolio.benchmark.empty() && !storage::read_portfolio(db, portfolio.benchmark))
    j["note"] = "benchmark '" + portfolio.benchmark + "' is not stored yet: risk queries need it (PUT /v1/portfolios/" +
                portfolio.benchmark + ")";
  return json_response(j, outcome.created ? 201 : 200);
}

ApiResponse delete_portfolio_endpoint(const ApiContext& context, const ApiRequest& r) {
  std::optional<engine::Date> as_of;
  if (auto bad = date_parameter(r, "as_of", as_of)) return *bad;
  const std::string& name = r.path_values.at("name");
  const std::size_t removed = storage::delete_portfolio(context.database(), name, as_of);
  if (removed == 0)
    return problem(404,
                   "no portfolio named '" + name + "'" + (as_of ? " with holdings as of " + as_of->iso() : "") +
                       "; nothing removed (GET /v1/portfolios lists them)",
                   r.path, as_of ? "as_of" : "name");
  return json_response({{"name", name}, {"removed_dates", removed}});
}

}  // namespace factorwatch::server
