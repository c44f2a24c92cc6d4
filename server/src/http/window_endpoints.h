// GET endpoints of one model's stored windows: the list with fit statistics, exposures
// and specific risk (JSON or CSV, with the caution).
#pragma once

#include "api_context.h"
#include "api_message.h"

namespace factorwatch::server {

ApiResponse list_windows_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse exposures_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse specific_risk_endpoint(const ApiContext& context, const ApiRequest& request);

}  // namespace factorwatch::server
