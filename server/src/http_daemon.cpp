#include "http_daemon.h"

#include <pthread.h>
#include <signal.h>

#include <chrono>
#include <climits>
#include <cstdlib>
#include <cstdio>
#include <ctime>
#include <regex>
#include <thread>

#include "access_token.h"
#include "api_context.h"
#include "factorwatch/engine/caution.h"
#include "factorwatch/storage/data_directory.h"
#include "factorwatch/storage/timestamps.h"
#include "factorwatch/storage/models.h"
#include "routes.h"

// Last: through <resolv.h> it defines the macro _res, a parameter name inside Eigen's
// headers, which must therefore come first.
#include <httplib.h>

#ifndef FACTORWATCH_VERSION
#define FACTORWATCH_VERSION "unknown"
#endif

namespace factorwatch::server {
namespace {

using Clock = std::chrono::steady_clock;

// Set when a request's routing starts, read by the logger on the same worker thread
// once the response is written.
thread_local Clock::time_point request_start;
thread_local bool request_timed = false;

bool is_loopback(const std::string& address) {
  return address == "localhost" || address == "::1" || address.rfind("127.", 0) == 0;
}

// "/v1/models/{name}/exposures" -> "/v1/models/([^/]+)/exposures" and the names in order.
std::pair<std::string, std::vector<std::string>> path_pattern(const std::string& path) {
  static const std::regex placeholder(R"(\{([a-z_]+)\})");
  std::vector<std::string> names;
  for (auto it = std::sregex_iterator(path.begin(), path.end(), placeholder); it != std::sregex_iterator(); ++it)
    names.push_back((*it)[1]);
  return {std::regex_replace(path, placeholder, "([^/]+)"), names};
}

void send(const ApiResponse& api, httplib::Response& res) {
  res.status = api.status;
  for (const auto& [name, value] : api.headers) res.set_header(name.c_str(), value);
  if (!api.body) return;
  // Large bodies (a whole window) go out from the shared buffer without a copy, and so
  // does a body the handler compressed: the library compresses only set_content bodies.
  bool encoded = false;
  for (const auto& header : api.headers) encoded = encoded || header.first == "Content-Encoding";
  if (api.body->size() > kLargeBody || encoded) {
    std::shared_ptr<const std::string> body = api.body;
    res.set_content_provider(body->size(), api.content_type, [body](std::size_t offset, std::size_t length, httplib::DataSink& sink) {
      return sink.write(body->data() + offset, length);
    });
  } else {
    res.set_content(*api.body, api.content_type.c_str());
  }
}

ApiRequest to_api_request(const httplib::Request& req, const std::vector<std::string>& names) {
  ApiRequest a;
  a.method = req.method;
  a.path = req.path;
  for (const auto& [name, value] : req.params) a.query.emplace(name, value);  // first of each
  for (std::size_t i = 0; i < names.size() && i + 1 < req.matches.size(); ++i) a.path_values[names[i]] = req.matches[i + 1];
  a.accept = req.get_header_value("Accept");
  a.accept_encoding = req.get_header_value("Accept-Encoding");
  a.content_type = req.get_header_value("Content-Type");
  if (req.is_multipart_form_data()) {
    if (req.has_file("file")) {
      const auto& files = req.files;
      const auto part = files.find("file");
      a.body = part->second.content;
      a.upload_name = part->second.filename;
    }
  } else {
    a.body = req.body;
  }
  return a;
}

class Daemon {
 public:
  Daemon(const DaemonOptions& o, std::string data_dir)
      : options_(o),
        data_dir_(std::move(data_dir)),
        cache_(o.cache_mb << 20),
        risk_models_(kRiskModelWindows),
        jobs_(storage::database_path(data_dir_)),
        tokens_(token_path(data_dir_)) {
    context_.data_dir = data_dir_;
    context_.database_path = storage::database_path(data_dir_);
    context_.max_upload_bytes = o.max_upload_mb << 20;
    context_.jobs = &jobs_;
    context_.cache = &cache_;
    context_.risk_models = &risk_models_;
    context_.state = &state_;
    context_.reads_need_token = o.reads_need_token || !is_loopback(o.address);
  }

  int run();

 private:
  void configure();
  void handle(const Route& route, const std::vector<std::string>& names, const httplib::Request& req,
              httplib::Response& res);
  bool open_database();
  void print_banner(int port);

  DaemonOptions options_;
  std::string data_dir_;
  ResponseCache cache_;
  RiskModelCache risk_models_;
  RefreshJobs jobs_;
  TokenGuard tokens_;
  std::atomic<DaemonState> state_{DaemonState::starting};
  ApiContext context_;
  httplib::Server http_;
  std::vector<std::pair<std::regex, const Route*>> patterns_;  // for 405 answers
};

void Daemon::handle(const Route& route, const std::vector<std::string>& names, const httplib::Request& req,
                    httplib::Response& res) {
  if (!route.before_ready && state_.load() != DaemonState::ready) {
    send(problem(503, state_.load() == DaemonState::starting ? "not ready: the database is being opened and migrated"
                                                              : "shutting down",
                 req.path),
         res);
    res.set_header("Retry-After", "2");
    return;
  }
  const bool needs_token = route.write || (context_.reads_need_token && !route.before_ready);
  if (needs_token && !tokens_.accepts(req.get_header_value("Authorization"))) {
    const bool given = req.has_header("Authorization");
    send(problem(401,
                 given ? "header 'Authorization': the token is wrong (factorwatch token prints the right one)"
                       : std::string("header 'Authorization': ") + (route.write ? "writes" : "reads") +
                             " need 'Bearer <token>' (factorwatch token prints it)",
                 req.path, "Authorization"),
         res);
    res.set_header("WWW-Authenticate", "Bearer realm=\"factorwatch\"");
    return;
  }
  ApiResponse response;
  try {
    response = route.handler(context_, to_api_request(req, names));
  } catch (const std::exception& e) {
    std::fprintf(stderr, "%s error in %s %s: %s\n", storage::utc_timestamp().c_str(), req.method.c_str(), req.path.c_str(), e.what());
    response = problem(500, std::string("internal error: ") + e.what(), req.path);
  }
  send(response, res);
}

void Daemon::configure() {
  const std::size_t threads = static_cast<std::size_t>(options_.threads);
  http_.new_task_queue = [threads] { return new httplib::ThreadPool(threads); };
  http_.set_read_timeout(options_.read_timeout_seconds, 0);
  http_.set_write_timeout(options_.write_timeout_seconds, 0);
  // A kept-alive connection holds a worker thread while it waits for its next request,
  // so clients beyond --threads queue behind the kept-alive ones: an idle connection is
  // closed after 2 s, and the default of 64 threads covers the clients a local daemon
  // serves. Closing busy connections early to rotate them cost more than it saved
  // (8 clients, 5,000-asset window: p99 8.5 ms with 1,000 requests per connection,
  // 13.9 ms with 10; docs/performance.md).
  http_.set_keep_alive_timeout(2);
  http_.set_keep_alive_max_count(1000);
  // Without it, a small last segment of a response can wait for the client's delayed
  // acknowledgement: 40 ms stalls at p99.9 for a client sending one request at a time.
  http_.set_tcp_nodelay(true);
  http_.set_payload_max_length(options_.max_upload_mb << 20);

  for (const Route& route : api_routes()) {
    auto [pattern, names] = path_pattern(route.path);
    patterns_.emplace_back(std::regex(pattern), &route);
    auto handler = [this, &route, names = names](const httplib::Request& req, httplib::Response& res) {
      handle(route, names, req, res);
    };
    const std::string method = route.method;
    if (method == "GET") http_.Get(pattern, handler);
    else if (method == "POST") http_.Post(pattern, handler);
    else if (method == "PUT") http_.Put(pattern, handler);
    else if (method == "DELETE") http_.Delete(pattern, handler);
  }

  http_.set_pre_routing_handler([](const httplib::Request&, httplib::Response&) {
    request_start = Clock::now();
    request_timed = true;
    return httplib::Server::HandlerResponse::Unhandled;
  });
  // Errors the library produces itself (no route, body too large, malformed request)
  // get the same problem shape as the handlers' own.
  http_.set_error_handler(httplib::Server::HandlerWithResponse([this](const httplib::Request& req, httplib::Response& res) {
    if (!res.body.empty() || res.content_length_ > 0) return httplib::Server::HandlerResponse::Unhandled;
    if (res.status == 404) {
      std::string allowed;
      for (const auto& [pattern, route] : patterns_)
        if (std::regex_match(req.path, pattern)) allowed += (allowed.empty() ? "" : ", ") + std::string(route->method);
      if (!allowed.empty()) {
        send(problem(405, req.method + " is not allowed on " + req.path + "; allowed: " + allowed, req.path), res);
        res.status = 405;
        res.set_header("Allow", allowed);
        return httplib::Server::HandlerResponse::Handled;
      }
      send(problem(404, "no such route: " + req.method + " " + req.path + " (GET /v1 lists the routes)", req.path), res);
    } else if (res.status == 413 && req.get_header_value("Content-Type") == "application/x-www-form-urlencoded") {
      // The HTTP library caps form-encoded bodies at 8 KiB whatever the upload limit;
      // curl --data-binary sends that type unless told otherwise.
      send(problem(413,
                   "header 'Content-Type': a form-encoded body is limited to 8 KiB; send a returns file as "
                   "'Content-Type: text/csv' (curl: -H 'Content-Type: text/csv' --data-binary @FILE)",
                   req.path, "Content-Type"),
           res);
    } else if (res.status == 413) {
      send(problem(413,
                   "request body larger than the limit of " + std::to_string(options_.max_upload_mb) +
                       " MiB (factorwatch serve --max-upload-mb)",
                   req.path, "body"),
           res);
    } else if (res.status == 400 && (req.method == "POST" || req.method == "PUT") && !req.has_header("Content-Length") &&
               !req.has_header("Transfer-Encoding")) {
      send(problem(400, "header 'Content-Length': a " + req.method + " needs a body, even an empty one (curl: -d '')",
                   req.path, "Content-Length"),
           res);
    } else {
      send(problem(res.status, std::string("the request could not be handled: ") + status_title(res.status), req.path),
           res);
    }
    return httplib::Server::HandlerResponse::Handled;
  }));
  http_.set_exception_handler([](const httplib::Request& req, httplib::Response& res, std::exception_ptr ep) {
    std::string what = "unknown error";
    try {
      if (ep) std::rethrow_exception(ep);
    } catch (const std::exception& e) {
      what = e.what();
    } catch (...) {
    }
    send(problem(500, "internal error: " + what, req.path), res);
  });
  http_.set_logger([](const httplib::Request& req, const httplib::Response& res) {
    double ms = -1;
    if (request_timed) ms = std::chrono::duration<double, std::milli>(Clock::now() - request_start).count();
    request_timed = false;
    if (ms >= 0)
      std::fprintf(stderr, "%s %s %s %d %.1f ms\n", storage::utc_timestamp().c_str(), req.method.c_str(), req.path.c_str(), res.status, ms);
    else
      std::fprintf(stderr, "%s %s %s %d - ms\n", storage::utc_timestamp().c_str(), req.method.c_str(), req.path.c_str(), res.status);
  });
}

bool Daemon::open_database() {
  try {
    const storage::Database& db = context_.database();  // creates and migrates on this thread
    std::fprintf(stderr, "%s database %s ready (schema version %d)\n", storage::utc_timestamp().c_str(), db.path().c_str(),
                 db.schema_version());
    return true;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch serve: %s\n", e.what());
    return false;
  }
}

void Daemon::print_banner(int port) {
  const std::string base = "http://" + (options_.address.find(':') != std::string::npos ? "[" + options_.address + "]"
                                                                                        : options_.address) +
                           ":" + std::to_string(port);
  std::string example = base + "/v1/models";
  try {
    const auto models = storage::list_models(context_.database());
    if (!models.empty()) example = base + "/v1/models/" + models.front().name + "/exposures?format=csv";
  } catch (const std::exception&) {
  }
  const std::string token_command =
      options_.program + " token" + (options_.data_dir.empty() ? std::string() : " --data " + options_.data_dir);
  std::printf("ready:   %s\n", base.c_str());
  std::printf("data:    %s\n", context_.database_path.c_str());
  std::printf("token:   %s   (writes need 'Authorization: Bearer <token>'%s)\n", token_command.c_str(),
              context_.reads_need_token ? "; so do reads" : "; reads are open on loopback");
  std::printf("try:     curl '%s'\n", example.c_str());
  std::printf("caution: %s\n", engine::kCaution);
  std::fflush(stdout);
}

int Daemon::run() {
  configure();
  int port = options_.port;
  if (port == 0) {
    port = http_.bind_to_any_port(options_.address);
    if (port < 0) port = 0;
  } else if (!http_.bind_to_port(options_.address, port)) {
    port = 0;
  }
  if (port == 0) {
    std::fprintf(stderr, "factorwatch serve: cannot listen on %s:%d (in use, or not an address of this machine); "
                         "choose another with --address / --port\n", options_.address.c_str(), options_.port);
    return 1;
  }
  std::printf("listening on http://%s:%d (factorwatch %s)\n", options_.address.c_str(), port, FACTORWATCH_VERSION);
  std::fflush(stdout);
  std::thread listener([this] { http_.listen_after_bind(); });

  int code = 0;
  if (open_database()) {
    state_ = DaemonState::ready;
    print_banner(port);
    // Wait for SIGTERM or SIGINT (blocked in every thread, taken here).
    sigset_t stop_signals;
    sigemptyset(&stop_signals);
    sigaddset(&stop_signals, SIGTERM);
    sigaddset(&stop_signals, SIGINT);
    int signal_number = 0;
    sigwait(&stop_signals, &signal_number);
    std::fprintf(stderr, "%s %s: stopping (in-flight requests finish; a running refresh stops after its window)\n",
                 storage::utc_timestamp().c_str(), signal_number == SIGINT ? "SIGINT" : "SIGTERM");
  } else {
    code = 1;
  }
  state_ = DaemonState::stopping;
  http_.stop();      // no new connections; the worker pool finishes what it holds
  listener.join();
  jobs_.stop();      // the refresh writes its current window, then ends
  std::fprintf(stderr, "%s stopped\n", storage::utc_timestamp().c_str());
  return code;
}

}  // namespace

bool DaemonOptions::IsValid(std::string* error) const {
  auto fail = [error](const std::string& message) {
    if (error) *error = message;
    return false;
  };
  if (port < 0 || port > 65535) return fail("option '--port' = " + std::to_string(port) + ": must be 0..65535");
  if (threads < 1 || threads > 256) return fail("option '--threads' = " + std::to_string(threads) + ": must be 1..256");
  if (max_upload_mb < 1) return fail("option '--max-upload-mb': must be at least 1");
  if (read_timeout_seconds < 1) return fail("option '--read-timeout': must be at least 1 second");
  if (write_timeout_seconds < 1) return fail("option '--write-timeout': must be at least 1 second");
  return true;
}

int run_daemon(const DaemonOptions& options) {
  std::string error;
  if (!options.IsValid(&error)) {
    std::fprintf(stderr, "factorwatch serve: %s\n", error.c_str());
    return 2;
  }
  // Before any thread starts: every thread inherits the mask, so the stop signals reach
  // only sigwait in run(). A client that hangs up mid-response must not kill the daemon.
  sigset_t stop_signals;
  sigemptyset(&stop_signals);
  sigaddset(&stop_signals, SIGTERM);
  sigaddset(&stop_signals, SIGINT);
  pthread_sigmask(SIG_BLOCK, &stop_signals, nullptr);
  signal(SIGPIPE, SIG_IGN);

  std::string data_dir;
  try {
    data_dir = storage::resolve_data_directory(options.data_dir);
    if (char* absolute = ::realpath(data_dir.c_str(), nullptr)) {
      data_dir = absolute;
      std::free(absolute);
    }
    ensure_token(token_path(data_dir));
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch serve: %s\n", e.what());
    return 1;
  }
  Daemon daemon(options, data_dir);
  return daemon.run();
}

}  // namespace factorwatch::server
