// A portfolio's risk in a model's window over HTTP: GET by stored portfolio name (a plain
// URL a spreadsheet can import as CSV) and POST with weights in the body (for scripts).
#pragma once

#include "api_context.h"
#include "api_message.h"

namespace factorwatch::server {

ApiResponse stored_portfolio_risk_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse posted_weights_risk_endpoint(const ApiContext& context, const ApiRequest& request);

}  // namespace factorwatch::server
