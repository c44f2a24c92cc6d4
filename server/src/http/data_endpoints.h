// Returns over HTTP: upload a file (a write; the same rules, messages and all-or-nothing
// storing as `factorwatch load`) and list the stored assets.
#pragma once

#include "api_context.h"
#include "api_message.h"

namespace factorwatch::server {

ApiResponse upload_returns_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse list_assets_endpoint(const ApiContext& context, const ApiRequest& request);

}  // namespace factorwatch::server
