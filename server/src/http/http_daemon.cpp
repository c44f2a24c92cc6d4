#include "http_daemon.h"

#include <arpa/inet.h>
#include <netinet/in.h>
#include <poll.h>
#include <pthread.h>
#include <signal.h>
#include <sys/socket.h>

#include <algorithm>
#include <cerrno>
#include <chrono>
#include <climits>
#include <cstdlib>
#include <cstdio>
#include <cstring>
#include <ctime>
#include <regex>
#include <thread>

#include "access_token.h"
#include "api_context.h"
#include "connection_gate.h"
#include "host_rules.h"
#include "port_holder.h"
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

// What the serving loop and the request hooks know about the request now being served
// on this worker thread.
struct RequestGuard {
  Clock::time_point deadline;        // the whole request (head and body) must be read by then
  std::size_t read_budget = 0;       // bytes the parser may read in all; grows once the route allows a body
  std::size_t head_length = 0;
  bool over_budget = false;          // the body went past the route's limit
  bool timed_out = false;            // the body did not arrive before the deadline
  bool answered_early = false;       // refused before its body was read: the connection must close
};
thread_local RequestGuard* current_guard = nullptr;

// The HTTP library's view of one connection: reads come first from the bytes the gate
// already received, then from the socket, each bounded by the request's deadline and
// byte budget (the library's own stream waits per read, without end in total).
class GuardedStream final : public httplib::Stream {
 public:
  GuardedStream(Connection& connection, RequestGuard& guard, std::chrono::seconds write_timeout)
      : connection_(connection), guard_(guard), write_timeout_(write_timeout) {}

  bool is_readable() const override { return consumed_ < connection_.received.size() || wait_for(POLLIN, guard_.deadline); }
  bool is_writable() const override { return wait_for(POLLOUT, Clock::now() + write_timeout_); }

  ssize_t read(char* ptr, size_t size) override {
    if (size == 0) return 0;
    if (read_ >= guard_.read_budget) {
      guard_.over_budget = true;
      return -1;
    }
    size = std::min(size, guard_.read_budget - read_);
    if (consumed_ < connection_.received.size()) {
      const std::size_t n = std::min(size, connection_.received.size() - consumed_);
      std::memcpy(ptr, connection_.received.data() + consumed_, n);
      consumed_ += n;
      read_ += n;
      return static_cast<ssize_t>(n);
    }
    for (;;) {
      const ssize_t got = ::recv(connection_.fd(), ptr, size, 0);
      if (got >= 0) {
        read_ += static_cast<std::size_t>(got);
        return got;
      }
      if (errno == EINTR) continue;
      if (errno != EAGAIN && errno != EWOULDBLOCK) return -1;
      if (!wait_for(POLLIN, guard_.deadline)) {
        guard_.timed_out = Clock::now() >= guard_.deadline;
        return -1;
      }
    }
  }

  ssize_t write(const char* ptr, size_t size) override {
    for (;;) {
      const ssize_t sent = ::send(connection_.fd(), ptr, size, MSG_NOSIGNAL);
      if (sent >= 0) return sent;
      if (errno == EINTR) continue;
      if (errno != EAGAIN && errno != EWOULDBLOCK) return -1;
      if (!wait_for(POLLOUT, Clock::now() + write_timeout_)) return -1;
    }
  }

  void get_remote_ip_and_port(std::string& ip, int& port) const override { socket_address(connection_.fd(), false, ip, port); }
  void get_local_ip_and_port(std::string& ip, int& port) const override { socket_address(connection_.fd(), true, ip, port); }
  socket_t socket() const override { return connection_.fd(); }

  // Bytes of `received` the parser took; the rest belongs to the next request.
  std::size_t consumed() const { return std::min(consumed_, connection_.received.size()); }

 private:
  bool wait_for(short events, Clock::time_point until) const {
    for (;;) {
      const auto left = std::chrono::duration_cast<std::chrono::milliseconds>(until - Clock::now()).count();
      if (left <= 0) return false;
      pollfd p{connection_.fd(), events, 0};
      const int ready = ::poll(&p, 1, static_cast<int>(std::min<long long>(left, 1000)));
      if (ready > 0) return true;
      if (ready < 0 && errno != EINTR) return false;
    }
  }

  Connection& connection_;
  RequestGuard& guard_;
  std::chrono::seconds write_timeout_;
  std::size_t consumed_ = 0;  // of connection_.received
  std::size_t read_ = 0;      // handed to the parser in this request
};

// The HTTP library parses and routes; the connections are the gate's. The library's
// accept loop hands each new socket over (the override below), and workers of the gate
// call the library's request processing on a guarded stream, one request at a time.
class GatedServer final : public httplib::Server {
 public:
  void set_gate(ConnectionGate* gate) { gate_ = gate; }
  // The library listens with a backlog of 5 (fixed in Debian's build of it): 64 clients
  // connecting at once saw 77 of 640 connections reset. Listening again on the bound
  // socket takes the system's largest backlog instead (Linux updates it in place).
  bool widen_backlog() { return svr_sock_ != INVALID_SOCKET && ::listen(svr_sock_, SOMAXCONN) == 0; }
  // One request: parse, route, answer. False when the connection broke.
  bool serve_one(httplib::Stream& stream, bool last, bool& client_closes) {
    return process_request(stream, last, client_closes, nullptr);
  }

 private:
  bool process_and_close_socket(socket_t sock) override {
    if (gate_) gate_->admit(sock);
    else ::close(sock);
    return true;
  }
  ConnectionGate* gate_ = nullptr;
};

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
  // The query string only: the library also adds the fields of a form-encoded body (what
  // curl -d sends) to req.params, and a body is never read as query parameters.
  if (const std::size_t question = req.target.find('?'); question != std::string::npos) {
    httplib::Params query;
    httplib::detail::parse_query_text(req.target.substr(question + 1), query);
    for (const auto& [name, value] : query) a.query.emplace(name, value);  // first of each
  }
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
  // Checks what the head alone decides (Host, Origin, route, token, body size and
  // encoding) before any body is read; true when it answered the request.
  bool answer_from_head(const httplib::Request& req, httplib::Response& res);
  const Route* route_for(const std::string& method, const std::string& path, std::string* allowed) const;
  void serve_connection(std::unique_ptr<Connection> connection);
  bool next_head_arrives(Connection& connection) const;
  std::string refusal_bytes(int status, const std::string& detail, const std::string& field) const;
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
  GatedServer http_;
  std::unique_ptr<ConnectionGate> gate_;
  std::unique_ptr<HostRules> hosts_;  // known once the port is bound
  std::vector<std::pair<std::regex, const Route*>> patterns_;  // every route, for 404/405 and the checks
};

// A request may carry a body when it says so (RFC 9112 section 6.3).
bool has_body(const httplib::Request& req) {
  return req.has_header("Transfer-Encoding") ||
         (req.has_header("Content-Length") && req.get_header_value("Content-Length") != "0");
}

// Requests answered on one kept-alive connection before it is closed: enough that a
// client reusing its connection rarely reconnects (docs/performance.md measured p99
// 8.5 ms with 1,000 against 13.9 ms with 10).
constexpr std::size_t kKeepAliveRequests = 1000;

// The route's limit on the body: a returns upload may use all of --max-upload-mb; a JSON
// or holdings body is far smaller (a 20,000-asset holdings file is about 1 MB), and a
// parsed JSON body costs several times its size in memory.
constexpr std::size_t kSmallBodyLimit = 16 << 20;

std::size_t body_limit(const Route& route, std::size_t max_upload) {
  if (std::string(route.path) == "/v1/returns") return max_upload;
  return std::min(max_upload, kSmallBodyLimit);
}

const Route* Daemon::route_for(const std::string& method, const std::string& path, std::string* allowed) const {
  const std::string wanted = method == "HEAD" ? "GET" : method;
  const Route* found = nullptr;
  for (const auto& [pattern, route] : patterns_) {
    if (!std::regex_match(path, pattern)) continue;
    if (wanted == route->method) found = route;
    if (allowed) *allowed += (allowed->empty() ? "" : ", ") + std::string(route->method);
  }
  return found;
}

ApiResponse no_route_problem(const std::string& method, const std::string& path, const std::string& allowed) {
  if (!allowed.empty()) {
    ApiResponse r = problem(405, method + " is not allowed on " + path + "; allowed: " + allowed, path);
    r.headers.emplace_back("Allow", allowed);
    return r;
  }
  return problem(404, "no such route: " + method + " " + path + " (GET /v1 lists the routes)", path);
}

bool Daemon::answer_from_head(const httplib::Request& req, httplib::Response& res) {
  RequestGuard* guard = current_guard;
  auto answer = [&](ApiResponse response) {
    send(response, res);
    if (guard && has_body(req)) {
      // The body is not read: the connection closes after this answer, and says so, so
      // that a client reusing connections opens a new one for its next request.
      guard->answered_early = true;
      res.set_header("Connection", "close");
    }
    return true;
  };
  // Host first: an answer of any other kind would tell a rebinding page something.
  if (!req.has_header("Host")) {
    if (req.version != "HTTP/1.0")
      return answer(problem(400, "header 'Host': an HTTP/1.1 request must name the host (RFC 9112 section 3.2)",
                            req.path, "Host"));
  } else if (req.get_header_value_count("Host") > 1) {
    return answer(problem(400, "header 'Host' appears more than once", req.path, "Host"));
  } else if (auto why = hosts_->host_problem(req.get_header_value("Host"))) {
    return answer(problem(421, *why, req.path, "Host"));
  }
  if (req.has_header("Origin")) {
    if (auto why = hosts_->origin_problem(req.get_header_value("Origin")))
      return answer(problem(403, *why, req.path, "Origin"));
  }
  std::string allowed;
  const Route* route = route_for(req.method, req.path, &allowed);
  if (!route) return answer(no_route_problem(req.method, req.path, allowed));
  const bool needs_token = route->write || (context_.reads_need_token && !route->before_ready);
  if (needs_token && !tokens_.accepts(req.get_header_value("Authorization"))) {
    const bool given = req.has_header("Authorization");
    ApiResponse r = problem(401,
                            given ? "header 'Authorization': the token is wrong (factorwatch token prints the right one)"
                                  : std::string("header 'Authorization': ") + (route->write ? "writes" : "reads") +
                                        " need 'Bearer <token>' (factorwatch token prints it)",
                            req.path, "Authorization");
    r.headers.emplace_back("WWW-Authenticate", "Bearer realm=\"factorwatch\"");
    return answer(std::move(r));
  }
  // The body's framing and size, from the head alone.
  if ((req.method == "POST" || req.method == "PUT") && !req.has_header("Content-Length") &&
      !req.has_header("Transfer-Encoding"))
    return answer(problem(400, "header 'Content-Length': a " + req.method + " needs a body, even an empty one (curl: -d '')",
                          req.path, "Content-Length"));
  const std::size_t limit = body_limit(*route, context_.max_upload_bytes);
  const bool chunked = req.has_header("Transfer-Encoding");
  if (chunked) {
    std::string coding = req.get_header_value("Transfer-Encoding");
    for (char& c : coding) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    if (coding != "chunked" || req.get_header_value_count("Transfer-Encoding") > 1)
      return answer(problem(501, "header 'Transfer-Encoding': only 'chunked' is accepted", req.path, "Transfer-Encoding"));
    if (req.has_header("Content-Length"))
      return answer(problem(400, "headers 'Content-Length' and 'Transfer-Encoding' together are refused (RFC 9112 section 6.1)",
                            req.path, "Content-Length"));
  }
  std::size_t declared = 0;
  if (req.has_header("Content-Length")) {
    const std::string text = req.get_header_value("Content-Length");
    const bool digits = !text.empty() && text.size() <= 19 &&
                        std::all_of(text.begin(), text.end(), [](char c) { return c >= '0' && c <= '9'; });
    if (!digits || req.get_header_value_count("Content-Length") > 1)
      return answer(problem(400, "header 'Content-Length': not one whole number of bytes", req.path, "Content-Length"));
    declared = static_cast<std::size_t>(std::stoull(text));
  }
  if (declared > limit)
    return answer(problem(413,
                          "request body of " + std::to_string(declared) + " bytes is larger than the limit of " +
                              std::to_string(limit >> 20) + " MiB" +
                              (limit == context_.max_upload_bytes ? " (factorwatch serve --max-upload-mb)" : " for this route"),
                          req.path, "body"));
  if (req.has_header("Content-Encoding")) {
    std::string coding = req.get_header_value("Content-Encoding");
    for (char& c : coding) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    // A compressed body is refused rather than expanded: 1 MB of gzip can expand to
    // 1,000 MB before any limit sees it.
    if (coding != "identity")
      return answer(problem(415, "header 'Content-Encoding': send the body uncompressed", req.path, "Content-Encoding"));
  }
  // Allowed: the parser may now read the body, and no more than the limit (chunked
  // framing adds a few bytes per chunk; 1/8 of the limit covers chunks down to 64 bytes).
  if (guard) guard->read_budget = guard->head_length + (chunked ? limit + limit / 8 + 4096 : declared);
  return false;
}

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
  ApiResponse response;
  try {
    ApiRequest request = to_api_request(req, names);
    // The token was checked from the head (answer_from_head); here it only decides what
    // a read may show (the health route's full database path).
    request.authorised = req.has_header("Authorization") && tokens_.accepts(req.get_header_value("Authorization"));
    response = call_route(route, context_, request);  // a handler's exception is a 500 problem there
  } catch (const std::exception& e) {  // building the request itself failed (memory)
    response = problem(500, std::string("internal error: ") + e.what(), req.path);
  }
  send(response, res);
}

std::string Daemon::refusal_bytes(int status, const std::string& detail, const std::string& field) const {
  const ApiResponse r = problem(status, detail, "", field);
  const std::string& body = *r.body;
  return "HTTP/1.1 " + std::to_string(status) + " " + status_title(status) +
         "\r\nContent-Type: application/problem+json\r\nContent-Length: " + std::to_string(body.size()) +
         "\r\nConnection: close\r\n\r\n" + body;
}

// One worker's turn with a connection: requests whose heads are complete are answered one
// after the other; then the connection goes back to the gate to wait, or closes.
void Daemon::serve_connection(std::unique_ptr<Connection> connection) {
  for (;;) {
    RequestGuard guard;
    guard.deadline = Clock::now() + std::chrono::seconds(options_.read_timeout_seconds);
    const HeadCheck head = check_request_head(connection->received, gate_->limits().head);
    if (head.state != HeadCheck::State::complete) {
      gate_->park(std::move(connection));  // the gate refuses it, or waits for the rest
      return;
    }
    guard.head_length = head.length;
    guard.read_budget = head.length;  // no body until answer_from_head allows one
    GuardedStream stream(*connection, guard, std::chrono::seconds(options_.write_timeout_seconds));
    // The library closes a kept-alive connection after this many requests.
    const bool last = connection->requests_served + 1 >= kKeepAliveRequests || gate_->stopping();
    bool client_closes = false;
    current_guard = &guard;
    const bool ok = http_.serve_one(stream, last, client_closes);
    current_guard = nullptr;
    ++connection->requests_served;
    connection->received.erase(0, stream.consumed());
    if (guard.answered_early || guard.over_budget || guard.timed_out) {
      gate_->drain(std::move(connection));  // the client may still be sending its body
      return;
    }
    if (!ok || client_closes || last) return;  // closed here
    if (!next_head_arrives(*connection)) {
      gate_->park(std::move(connection));
      return;
    }
  }
}

// A client that reuses its connection usually sends its next request within a fraction
// of a millisecond of reading the answer. Waiting that long here, instead of handing the
// connection back to the gate at once, saves two thread switches per request (throughput
// on small answers measured 2.5 times lower without it); a client slower than the window
// waits in the gate, so no worker is held longer than this.
bool Daemon::next_head_arrives(Connection& connection) const {
  constexpr auto kWindow = std::chrono::microseconds(1500);
  const auto until = Clock::now() + kWindow;
  const HeadLimits& limits = gate_->limits().head;
  for (;;) {
    const HeadCheck check = check_request_head(connection.received, limits);
    if (check.state != HeadCheck::State::incomplete) return check.state == HeadCheck::State::complete;
    const auto left = std::chrono::duration_cast<std::chrono::microseconds>(until - Clock::now()).count();
    if (left <= 0) return false;
    pollfd p{connection.fd(), POLLIN, 0};
    const timespec wait{0, static_cast<long>(left) * 1000};
    if (::ppoll(&p, 1, &wait, nullptr) <= 0) return false;
    char chunk[16 << 10];
    const ssize_t got = ::recv(connection.fd(), chunk, sizeof chunk, 0);
    if (got <= 0) return false;  // closed or broken: the gate sees it too and closes
    connection.received.append(chunk, static_cast<std::size_t>(got));
  }
}

void Daemon::configure() {
  // The library's accept loop only hands sockets to the gate: one thread is enough.
  http_.new_task_queue = [] { return new httplib::ThreadPool(1); };
  http_.set_tcp_nodelay(true);
  // What the Keep-Alive field tells clients; the serving loop enforces both.
  http_.set_keep_alive_timeout(2);
  http_.set_keep_alive_max_count(kKeepAliveRequests);
  // The gate checks the size from the head and the stream enforces it while reading;
  // this is the library's own last line.
  http_.set_payload_max_length(options_.max_upload_mb << 20);
  // The library's own listening socket asks for SO_REUSEPORT, with which a second daemon
  // (on another database) binds the same port and the kernel spreads the requests between
  // the two. SO_REUSEADDR alone lets a restart bind at once (connections of the stopped
  // daemon still in TIME_WAIT do not block it) while a live listener makes bind fail.
  http_.set_socket_options([](socket_t sock) {
    int yes = 1;
    ::setsockopt(sock, SOL_SOCKET, SO_REUSEADDR, &yes, sizeof yes);
  });

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

  http_.set_pre_routing_handler([this](const httplib::Request& req, httplib::Response& res) {
    request_start = Clock::now();
    request_timed = true;
    return answer_from_head(req, res) ? httplib::Server::HandlerResponse::Handled
                                      : httplib::Server::HandlerResponse::Unhandled;
  });
  // A client that waits for "100 Continue" before sending its body gets the refusal
  // instead, and sends nothing.
  http_.set_expect_100_continue_handler([this](const httplib::Request& req, httplib::Response& res) {
    return answer_from_head(req, res) ? res.status : 100;
  });
  // Errors the library produces itself (no route, body too large, malformed request)
  // get the same problem shape as the handlers' own.
  http_.set_error_handler(httplib::Server::HandlerWithResponse([this](const httplib::Request& req, httplib::Response& res) {
    if (!res.body.empty() || res.content_length_ > 0) return httplib::Server::HandlerResponse::Unhandled;
    const RequestGuard* guard = current_guard;
    if (guard && (guard->over_budget || guard->timed_out)) res.set_header("Connection", "close");
    if (guard && guard->over_budget) {
      const Route* route = route_for(req.method, req.path, nullptr);
      const std::size_t limit = route ? body_limit(*route, context_.max_upload_bytes) : context_.max_upload_bytes;
      send(problem(413, "request body larger than the limit of " + std::to_string(limit >> 20) +
                            " MiB for this route (factorwatch serve --max-upload-mb)",
                   req.path, "body"),
           res);
      res.status = 413;
    } else if (guard && guard->timed_out) {
      send(problem(408, "the request body did not arrive within " + std::to_string(options_.read_timeout_seconds) +
                            " s (factorwatch serve --read-timeout)",
                   req.path, "body"),
           res);
      res.status = 408;
    } else if (res.status == 404) {
      std::string allowed;
      route_for(req.method, req.path, &allowed);
      const ApiResponse r = no_route_problem(req.method, req.path, allowed);
      send(r, res);
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
    // The path as sent may hold any byte: the log shows printable ASCII only.
    std::string path;
    for (unsigned char c : req.path.substr(0, 300)) {
      if (c >= 0x20 && c < 0x7f) {
        path += static_cast<char>(c);
      } else {
        char hex[5];
        std::snprintf(hex, sizeof hex, "%%%02X", c);
        path += hex;
      }
    }
    if (ms >= 0)
      std::fprintf(stderr, "%s %s %s %d %.1f ms\n", storage::utc_timestamp().c_str(), req.method.c_str(), path.c_str(), res.status, ms);
    else
      std::fprintf(stderr, "%s %s %s %d - ms\n", storage::utc_timestamp().c_str(), req.method.c_str(), path.c_str(), res.status);
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
    const std::string holder = options_.port > 0 ? describe_port_holder(find_port_holder(options_.port), options_.port) : "";
    if (holder.empty())
      std::fprintf(stderr, "factorwatch serve: cannot listen on %s:%d (in use, or not an address of this machine); "
                           "choose another with --address / --port\n", options_.address.c_str(), options_.port);
    else
      std::fprintf(stderr, "factorwatch serve: cannot listen on %s:%d: the port is taken: %s; stop that daemon, or "
                           "choose another port with --port\n", options_.address.c_str(), options_.port, holder.c_str());
    return 1;
  }
  if (!http_.widen_backlog())
    std::fprintf(stderr, "%s warning: could not widen the listen backlog; bursts of connections may be reset\n",
                 storage::utc_timestamp().c_str());
  hosts_ = std::make_unique<HostRules>(options_.address, port, options_.allowed_hosts);
  GateLimits limits;
  limits.max_connections = static_cast<std::size_t>(options_.max_connections);
  limits.head_deadline = std::chrono::seconds(options_.head_timeout_seconds);
  limits.idle_deadline = std::chrono::seconds(2);
  limits.workers = options_.threads;
  gate_ = std::make_unique<ConnectionGate>(
      limits, [this](std::unique_ptr<Connection> c) { serve_connection(std::move(c)); },
      [this](int status, const std::string& detail, const std::string& field) {
        return refusal_bytes(status, detail, field);
      },
      [](const std::string& line) {
        std::string shown;
        for (unsigned char c : line) shown += (c >= 0x20 && c < 0x7f) ? static_cast<char>(c) : '?';
        std::fprintf(stderr, "%s %s\n", storage::utc_timestamp().c_str(), shown.c_str());
      });
  gate_->start();
  http_.set_gate(gate_.get());
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
  http_.stop();      // no new connections
  listener.join();
  gate_->stop();     // waiting connections close; workers finish the request they serve
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
  if (head_timeout_seconds < 1) return fail("option '--head-timeout': must be at least 1 second");
  if (max_connections < threads || max_connections > 1000)
    return fail("option '--max-connections' = " + std::to_string(max_connections) + ": must be at least --threads (" +
                std::to_string(threads) + ") and at most 1000");
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
