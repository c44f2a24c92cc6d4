// Factor returns and residual returns over HTTP: the factor-return series across windows
// (or every date of one window) and one asset's residual returns in a window. JSON by
// default, CSV on request, the same bytes as the CLI's --format csv / json.
#pragma once

#include "api_context.h"
#include "api_message.h"

namespace factorwatch::server {

ApiResponse factor_returns_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse residuals_endpoint(const ApiContext& context, const ApiRequest& request);

}  // namespace factorwatch::server
