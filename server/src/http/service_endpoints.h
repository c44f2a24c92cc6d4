// The daemon's own endpoints: the route index, health (readiness) and version.
#pragma once

#include "api_context.h"
#include "api_message.h"

namespace factorwatch::server {

ApiResponse index_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse health_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse version_endpoint(const ApiContext& context, const ApiRequest& request);

}  // namespace factorwatch::server
