// Drift over HTTP: every window's comparison with the previous and the pinned window (or
// one window asset by asset), one asset's exposures across windows, and the alerts.
// JSON by default, CSV on request, the same bytes as the CLI's --format csv / json.
#pragma once

#include "api_context.h"
#include "api_message.h"

namespace factorwatch::server {

ApiResponse drift_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse history_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse alerts_endpoint(const ApiContext& context, const ApiRequest& request);

}  // namespace factorwatch::server
