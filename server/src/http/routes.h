// The HTTP API's route table: the one place a route is declared. The daemon registers
// these, GET /v1 lists them, and a test checks each one against docs/openapi.yaml.
#pragma once

#include <string>
#include <vector>

#include "api_context.h"
#include "api_message.h"

namespace factorwatch::server {

using Handler = ApiResponse (*)(const ApiContext&, const ApiRequest&);

struct Route {
  const char* method;   // GET, POST, PUT or DELETE
  const char* path;     // with {name} / {id} placeholders, each one path segment
  bool write;           // needs the token always (reads only with --reads-need-token)
  bool before_ready;    // answered while the database is still being opened
  const char* summary;
  Handler handler;
  // The query parameters the route reads, space-separated ("as_of assets format"); none
  // when null. Any other parameter is a 400 naming it (call_route): a misspelt one
  // ("asof") would otherwise be ignored and the request answered as if it were absent.
  // docs/openapi.yaml lists the same ones (Daemon.EveryRouteIsInTheOpenApiDocument).
  const char* parameters = nullptr;
};

// The route's query parameters, in the order declared.
std::vector<std::string> route_parameters(const Route& route);

const std::vector<Route>& api_routes();

// Runs the route's handler as the daemon does: a handler that throws is answered with a
// 500 problem (damaged data named, with the hint to run `factorwatch verify`) and a line
// on stderr, never with a dropped connection. The daemon and the in-process handler tests
// (tests/handler_fixture.h) both call this.
ApiResponse call_route(const Route& route, const ApiContext& context, const ApiRequest& request);

}  // namespace factorwatch::server
