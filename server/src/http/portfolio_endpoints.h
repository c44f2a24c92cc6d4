// Endpoints of stored portfolios and benchmarks: list, show, store (PUT, token), remove
// (DELETE, token).
#pragma once

#include "api_context.h"
#include "api_message.h"

namespace factorwatch::server {

ApiResponse list_portfolios_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse show_portfolio_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse store_portfolio_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse delete_portfolio_endpoint(const ApiContext& context, const ApiRequest& request);

}  // namespace factorwatch::server
