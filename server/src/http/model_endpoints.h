// Models over HTTP: list, show, define (a write), start a refresh (a write, run as a
// background job) and follow the jobs.
#pragma once

#include "api_context.h"
#include "api_message.h"

namespace factorwatch::server {

ApiResponse list_models_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse show_model_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse define_model_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse start_refresh_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse delete_model_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse prune_model_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse rename_model_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse list_jobs_endpoint(const ApiContext& context, const ApiRequest& request);
ApiResponse show_job_endpoint(const ApiContext& context, const ApiRequest& request);

}  // namespace factorwatch::server
