// Risk-query latency in process: a 2,000-name long-short portfolio measured in a stored
// 5,000-asset window (k = 10), from the engine alone up to the HTTP handlers' response
// bodies, and the same computation in numpy (bench/risk_peer.py) from the same run.
//
//   risk_bench [--assets N] [--dates D] [--window W] [--factors K] [--method ml|pca]
//              [--names M] [--queries Q] [--warmup U] [--cold C] [--split-queries S]
//              [--seed SEED] [--peer PATH|none] [--python PATH] [--cases A,B,...]
//              [--save-bodies DIR]
//
// Setup (not timed): a temporary data directory; the planted panel (planted_panel.h) of
// N assets x D dates stored with storage::store_returns; a model of one window (the last
// W dates) fitted and stored by pipeline::refresh_model; an M-name portfolio (names drawn
// from the N, long-short weights, seeded) naming an N-name benchmark as its usual one,
// both stored with storage::save_portfolio.
//
// Timed, each over Q queries after U warm-up ones (microseconds: p50, p90, p99, max):
//   engine     engine::portfolio_risk(RiskModel, holdings): M names, the model built once
//   get_*      server::stored_portfolio_risk_endpoint on an ApiContext set up as the
//              daemon sets it up (this thread's connection, the risk model cache, the
//              response cache): holdings read from SQLite, the window's risk model from
//              the cache, risk computed, the body rendered (JSON or CSV, one row per
//              asset), without the benchmark (no_benchmark=true: one book of M assets) and
//              with it (three books: portfolio, benchmark and active, M + N + N rows)
//   post_json  server::posted_weights_risk_endpoint with the M weights in a JSON body
//              (parsed strictly, checked, measured, rendered)
//   cold       the first query of a window: its risk model read from SQLite and indexed
//              (an empty risk model cache each time; C times), and the process's very
//              first query, which also opens the thread's connection
//   parts      the GET path's parts one by one, S queries each ("risk_split" lines):
//              pick_window, read_portfolio, answer_risk, risk_json and its dump,
//              risk_csv, the POST body's parse, to see where the time goes
// Right after the engine case, the peer on the files written here (the served model, the
// stored weights and our figures, which it checks to 1e-10 relative); at the end the
// ratio peer / ours for the engine.
// --cases runs only the named cases (for profiling one); --save-bodies writes each
// endpoint case's response body to DIR/CASE.body (to check that a change keeps the bytes).
//
// Prints JSON lines ({"bench":"risk",...}), then a small table. Run it through
// bench/quiet_run.py (bench/run_all.sh does, three rounds; bench/risk_report.py gives the
// medians over rounds).
#include <malloc.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <functional>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>
#include <numeric>
#include <random>
#include <stdexcept>
#include <string>
#include <vector>

#include "api_context.h"
#include "factorwatch/engine/risk.h"
#include "factorwatch/pipeline/refresh.h"
#include "factorwatch/pipeline/risk_query.h"
#include "factorwatch/pipeline/window_query.h"
#include "factorwatch/storage/data_directory.h"
#include "factorwatch/storage/database.h"
#include "factorwatch/storage/ingest.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/portfolios.h"
#include "json_body.h"
#include "planted_panel.h"
#include "refresh_jobs.h"
#include "response_cache.h"
#include "risk_endpoints.h"
#include "risk_model_cache.h"
#include "risk_view.h"

#ifndef FACTORWATCH_BENCH_DIR
#define FACTORWATCH_BENCH_DIR "bench"
#endif

namespace fe = factorwatch::engine;
namespace fs = factorwatch::storage;
namespace fv = factorwatch::server;
namespace fp = factorwatch::pipeline;
namespace fb = factorwatch::bench;
using Clock = std::chrono::steady_clock;

namespace {

constexpr const char* kModel = "wide";
constexpr const char* kBook = "book";
constexpr const char* kIndex = "index";

struct Args {
  fb::Index assets = 5000;
  fb::Index dates = 520;
  int window = 504;
  int factors = fb::kPlantedFactors;
  std::string method = "ml";
  fb::Index names = 2000;
  int queries = 2000;
  int warmup = 50;
  int cold = 20;
  int split_queries = 500;
  std::uint64_t seed = 20261202;
  std::string peer = std::string(FACTORWATCH_BENCH_DIR) + "/risk_peer.py";
  std::string python = "/usr/bin/python3";  // Debian's, with numpy (not a pyenv one)
  std::string save_bodies;  // a directory: each endpoint case's last body goes there (CASE.body)
  std::vector<std::string> cases;  // empty = all: engine, get_json, get_json_benchmark, get_csv,
                                   // get_csv_benchmark, post_json, split, peer (for profiling one)
  bool runs(const std::string& name) const {
    return cases.empty() || std::find(cases.begin(), cases.end(), name) != cases.end();
  }
};

[[noreturn]] void usage(const std::string& problem) {
  std::fprintf(stderr,
               "risk_bench: %s\nusage: risk_bench [--assets N] [--dates D] [--window W] [--factors K] "
               "[--method ml|pca]\n                  [--names M] [--queries Q] [--warmup U] [--cold C] "
               "[--split-queries S]\n                  [--seed SEED] [--peer PATH|none] [--python PATH] [--cases A,B,...]\n                  [--save-bodies DIR]\n",
               problem.c_str());
  std::exit(2);
}

long long parse_int(const std::string& flag, const char* text, long long low) {
  char* end = nullptr;
  const long long v = std::strtoll(text, &end, 10);
  if (!end || *end != '\0' || v < low) usage(flag + " needs an integer >= " + std::to_string(low));
  return v;
}

Args parse(int argc, char** argv) {
  Args a;
  for (int i = 1; i < argc; ++i) {
    const std::string flag = argv[i];
    if (i + 1 >= argc) usage("missing value after " + flag);
    const char* value = argv[++i];
    if (flag == "--assets") a.assets = parse_int(flag, value, 20);
    else if (flag == "--dates") a.dates = parse_int(flag, value, 20);
    else if (flag == "--window") a.window = int(parse_int(flag, value, 20));
    else if (flag == "--factors") a.factors = int(parse_int(flag, value, 1));
    else if (flag == "--method") a.method = value;
    else if (flag == "--names") a.names = parse_int(flag, value, 1);
    else if (flag == "--queries") a.queries = int(parse_int(flag, value, 1));
    else if (flag == "--warmup") a.warmup = int(parse_int(flag, value, 0));
    else if (flag == "--cold") a.cold = int(parse_int(flag, value, 1));
    else if (flag == "--split-queries") a.split_queries = int(parse_int(flag, value, 1));
    else if (flag == "--seed") a.seed = std::uint64_t(parse_int(flag, value, 0));
    else if (flag == "--peer") a.peer = value;
    else if (flag == "--python") a.python = value;
    else if (flag == "--save-bodies") a.save_bodies = value;
    else if (flag == "--cases") {
      std::string list = value;
      for (std::size_t start = 0; start <= list.size();) {
        const std::size_t end = std::min(list.find(',', start), list.size());
        if (end > start) a.cases.push_back(list.substr(start, end - start));
        start = end + 1;
      }
    }
    else usage("unknown option " + flag);
  }
  if (a.method != "ml" && a.method != "pca") usage("--method must be ml or pca");
  if (a.dates < a.window) usage("--dates must be at least --window");
  if (a.names > a.assets) usage("--names must be at most --assets");
  return a;
}

// ---- timing -------------------------------------------------------------------------

struct Latency {
  double p50 = 0, p90 = 0, p99 = 0, max = 0, mean = 0;  // microseconds
};

// Nearest-rank percentiles (the smallest value with at least p of the sample at or below
// it); bench/risk_peer.py uses the same rule.
Latency summarise(std::vector<double> us) {
  std::sort(us.begin(), us.end());
  auto rank = [&us](double p) {
    const auto r = static_cast<std::size_t>(std::ceil(p * double(us.size())));
    return us[std::min(us.size(), std::max<std::size_t>(r, 1)) - 1];
  };
  Latency l;
  l.p50 = rank(0.50);
  l.p90 = rank(0.90);
  l.p99 = rank(0.99);
  l.max = us.back();
  l.mean = std::accumulate(us.begin(), us.end(), 0.0) / double(us.size());
  return l;
}

double micros(Clock::time_point a, Clock::time_point b) { return std::chrono::duration<double, std::micro>(b - a).count(); }

// `warmup` untimed calls, then `queries` timed ones, each timed alone.
Latency time_calls(int warmup, int queries, const std::function<void()>& call) {
  for (int i = 0; i < warmup; ++i) call();
  std::vector<double> us;
  us.reserve(std::size_t(queries));
  for (int i = 0; i < queries; ++i) {
    const auto t0 = Clock::now();
    call();
    us.push_back(micros(t0, Clock::now()));
  }
  return summarise(std::move(us));
}

// A JSON string literal (quotes and escapes).
std::string json_string(const std::string& s) { return nlohmann::json(s).dump(); }

void emit(const std::string& kind, const std::string& name, const Latency& l, int queries, const std::string& extra = "") {
  std::printf("{\"bench\":\"%s\",\"case\":%s,\"queries\":%d,\"p50_us\":%.2f,\"p90_us\":%.2f,\"p99_us\":%.2f,"
              "\"max_us\":%.2f,\"mean_us\":%.2f%s%s}\n",
              kind.c_str(), json_string(name).c_str(), queries, l.p50, l.p90, l.p99, l.max, l.mean,
              extra.empty() ? "" : ",", extra.c_str());
  std::fflush(stdout);
}

// ---- setup --------------------------------------------------------------------------

// A temporary directory, removed with everything in it when the benchmark ends.
struct TempDir {
  std::string path;
  TempDir() {
    char pattern[] = "/tmp/factorwatch-riskbench.XXXXXX";
    if (!mkdtemp(pattern)) throw std::runtime_error("cannot create a temporary directory under /tmp");
    path = pattern;
  }
  ~TempDir() {
    std::error_code ignored;
    std::filesystem::remove_all(path, ignored);
  }
};

// The portfolio: M names drawn from the N without repetition, in the drawn order, with
// long-short weights: each name long with probability 0.65, size uniform in [0.5, 1.5),
// longs scaled to 130% and shorts to -30% of capital (a 130/30 book). The benchmark: every
// asset, weights uniform in [0.5, 1.5) scaled to add up to 1.
fe::Holdings make_book(const std::vector<std::string>& assets, fb::Index names, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::vector<std::size_t> order(assets.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::shuffle(order.begin(), order.end(), rng);
  std::uniform_real_distribution<double> size(0.5, 1.5), coin(0.0, 1.0);
  fe::Holdings book;
  double longs = 0, shorts = 0;
  for (fb::Index i = 0; i < names; ++i) {
    const double w = (coin(rng) < 0.65 ? 1.0 : -1.0) * size(rng);
    (w > 0 ? longs : shorts) += w;
    book.push_back({assets[order[std::size_t(i)]], w});
  }
  for (fe::Holding& h : book) h.weight *= h.weight > 0 ? 1.3 / longs : -0.3 / shorts;
  return book;
}

fe::Holdings make_index(const std::vector<std::string>& assets, std::uint64_t seed) {
  std::mt19937_64 rng(seed + 1);
  std::uniform_real_distribution<double> size(0.5, 1.5);
  fe::Holdings index;
  double sum = 0;
  for (const std::string& a : assets) {
    index.push_back({a, size(rng)});
    sum += index.back().weight;
  }
  for (fe::Holding& h : index) h.weight /= sum;
  return index;
}

fv::ApiRequest risk_request(const std::string& method, std::map<std::string, std::string> query) {
  fv::ApiRequest r;
  r.method = method;
  r.path = std::string("/v1/models/") + kModel + "/risk";
  r.query = std::move(query);
  r.path_values = {{"name", kModel}};
  return r;
}

// ---- the peer's files ----------------------------------------------------------------

// The served model as the endpoint uses it, the stored weights and our figures:
//   risk_model.bin   int64 N, int64 k, then L (N x k), Phi (k x k), both row-major, psi (N);
//                    little-endian float64 (the only byte order this runs on, as
//                    planted_panel.h's panel file)
//   risk_assets.txt  the N asset names, one a line, in the model's row order
//   risk_weights.csv asset,weight (17 significant digits: the same doubles), holdings order
//   risk_ours.json   our figures for these weights, to 17 significant digits
void write_peer_files(const std::string& dir, const fe::RiskModel& m, const fe::Holdings& book,
                      const fe::PortfolioRisk& r) {
  const std::uint16_t probe = 1;
  if (*reinterpret_cast<const unsigned char*>(&probe) != 1)
    throw std::runtime_error("risk_bench: big-endian host not supported");
  const Eigen::Index n = m.loadings().rows(), k = m.factors();
  {
    std::ofstream f(dir + "/risk_model.bin", std::ios::binary);
    const std::int64_t header[2] = {std::int64_t(n), std::int64_t(k)};
    f.write(reinterpret_cast<const char*>(header), sizeof header);
    const fb::RowMatrix L = m.loadings();
    const fb::RowMatrix phi = m.factor_covariance();
    f.write(reinterpret_cast<const char*>(L.data()), std::streamsize(sizeof(double) * std::size_t(L.size())));
    f.write(reinterpret_cast<const char*>(phi.data()), std::streamsize(sizeof(double) * std::size_t(phi.size())));
    f.write(reinterpret_cast<const char*>(m.specific_variance().data()), std::streamsize(sizeof(double) * std::size_t(n)));
    if (!f) throw std::runtime_error("short write to " + dir + "/risk_model.bin");
  }
  {
    std::ofstream f(dir + "/risk_assets.txt");
    for (const std::string& a : m.assets()) f << a << '\n';
    if (!f) throw std::runtime_error("short write to " + dir + "/risk_assets.txt");
  }
  {
    std::ofstream f(dir + "/risk_weights.csv");
    f << "asset,weight\n";
    char number[40];
    for (const fe::Holding& h : book) {
      std::snprintf(number, sizeof number, "%.17g", h.weight);
      f << h.asset << ',' << number << '\n';
    }
    if (!f) throw std::runtime_error("short write to " + dir + "/risk_weights.csv");
  }
  nlohmann::json j;
  j["total_variance"] = r.total.variance;
  j["systematic_variance"] = r.systematic.variance;
  j["specific_variance"] = r.specific.variance;
  j["volatility"] = r.total.volatility;
  j["net"] = r.weights.net;
  j["gross"] = r.weights.gross;
  j["exposures"] = std::vector<double>(r.exposures.data(), r.exposures.data() + r.exposures.size());
  std::vector<double> factor_contribution, asset_contribution, marginal;
  for (const fe::FactorContribution& c : r.by_factor) factor_contribution.push_back(c.volatility);
  for (const fe::AssetContribution& c : r.by_asset) {
    asset_contribution.push_back(c.volatility);
    marginal.push_back(c.marginal);
  }
  j["factor_contribution"] = factor_contribution;
  j["specific_contribution"] = r.specific_volatility_contribution;
  j["asset_contribution"] = asset_contribution;
  j["marginal"] = marginal;
  std::ofstream f(dir + "/risk_ours.json");
  f << j.dump() << '\n';  // nlohmann writes the shortest text that reads back to the same double
  if (!f) throw std::runtime_error("short write to " + dir + "/risk_ours.json");
}

// Runs the peer and returns its JSON line (passed through to our output), or null.
nlohmann::json run_peer(const Args& a, const std::string& dir) {
  const std::string command = "'" + a.python + "' '" + a.peer + "' --dir '" + dir + "' --queries " +
                              std::to_string(a.queries) + " --warmup " + std::to_string(a.warmup);
  std::FILE* pipe = popen(command.c_str(), "r");
  if (!pipe) return nullptr;
  nlohmann::json result;
  std::string line;
  char buffer[4096];
  while (std::fgets(buffer, sizeof buffer, pipe)) {
    line += buffer;
    if (line.empty() || line.back() != '\n') continue;
    std::fputs(line.c_str(), stdout);
    if (line.front() == '{') {
      const auto j = nlohmann::json::parse(line, nullptr, false);
      if (!j.is_discarded() && j.value("bench", "") == "risk_peer") result = j;
    }
    line.clear();
  }
  const int status = pclose(pipe);
  if (status != 0) std::fprintf(stderr, "risk_bench: the peer (%s) ended with status %d\n", command.c_str(), status);
  std::fflush(stdout);
  return result;
}

}  // namespace

int main(int argc, char** argv) {
  const Args a = parse(argc, argv);
  // The daemon's process keeps freed memory (server/src/cli/main.cpp): the same here, or every
  // query's bodies of hundreds of KB would come as fresh pages from the kernel each time.
  mallopt(M_MMAP_THRESHOLD, 64 << 20);
  mallopt(M_TRIM_THRESHOLD, 256 << 20);
  volatile double sink = 0;  // every timed result feeds it, so no call is optimised away
  TempDir tmp;
  const std::string data_dir = tmp.path + "/data";
  const std::string db_path = fs::database_path(data_dir);

  // ---- setup (not timed) ----
  const auto setup_start = Clock::now();
  fe::ReturnsPanel panel;
  panel.dates = fb::business_dates(0, a.dates);
  panel.assets = fb::asset_names(a.assets);
  panel.values = fb::planted_rows(a.dates, a.assets, 0, a.dates);
  const fe::Date last_date = panel.dates.back();
  fe::Holdings book = make_book(panel.assets, a.names, a.seed);
  const fe::Holdings index = make_index(panel.assets, a.seed);
  double fit_seconds = 0;
  {
    fs::Database db(db_path);
    fs::IngestSource source;
    source.path = "planted panel (generated by risk_bench)";
    source.layout = "wide";
    fs::store_returns(db, panel, source);
    fs::ModelConfig config;
    config.window = a.window;
    config.fit.factors = a.factors;
    config.fit.method = a.method == "ml" ? fe::Method::max_likelihood : fe::Method::pca;
    config.first_as_of = last_date;  // exactly one window: the last `window` dates
    fs::set_model(db, kModel, config);
    const fp::RefreshSummary refreshed = fp::refresh_model(db, kModel);
    if (refreshed.fitted != 1 || refreshed.unusable != 0)
      throw std::runtime_error("risk_bench: expected one usable window, the refresh fitted " +
                               std::to_string(refreshed.fitted) + " (" + std::to_string(refreshed.unusable) +
                               " unusable)");
    fit_seconds = refreshed.fit_seconds;
    fs::Portfolio p;
    p.name = kIndex;
    p.as_of = last_date;
    p.holdings = index;
    p.source = "risk_bench";
    fs::save_portfolio(db, p);
    p.name = kBook;
    p.benchmark = kIndex;
    p.holdings = book;
    fs::save_portfolio(db, p);
  }
  panel = fe::ReturnsPanel{};  // the fit is stored; the panel is not needed any more
  const double setup_seconds = std::chrono::duration<double>(Clock::now() - setup_start).count();

  // The context as the daemon sets it up (server/src/http/http_daemon.cpp): this thread's
  // connection opened on first use, the response cache (256 MiB, the default --cache-mb)
  // and the risk model cache (kRiskModelWindows windows); the refresh jobs' worker idles.
  fv::ResponseCache response_cache(std::size_t(256) << 20);
  fv::RefreshJobs jobs(db_path);
  std::atomic<fv::DaemonState> state{fv::DaemonState::ready};
  auto make_context = [&](fv::RiskModelCache* risk_models) {
    fv::ApiContext c;
    c.data_dir = data_dir;
    c.database_path = db_path;
    c.max_upload_bytes = std::size_t(64) << 20;
    c.jobs = &jobs;
    c.cache = &response_cache;
    c.risk_models = risk_models;
    c.state = &state;
    return c;
  };
  fv::RiskModelCache risk_models(fv::kRiskModelWindows);
  const fv::ApiContext context = make_context(&risk_models);

  const fv::ApiRequest get_json = risk_request("GET", {{"portfolio", kBook}, {"no_benchmark", "true"}, {"format", "json"}});
  const fv::ApiRequest get_json_bench = risk_request("GET", {{"portfolio", kBook}, {"format", "json"}});
  const fv::ApiRequest get_csv = risk_request("GET", {{"portfolio", kBook}, {"no_benchmark", "true"}, {"format", "csv"}});
  const fv::ApiRequest get_csv_bench = risk_request("GET", {{"portfolio", kBook}, {"format", "csv"}});

  std::shared_ptr<const std::string> last_body;
  auto call = [&](const fv::ApiContext& c, const fv::ApiRequest& r,
                  fv::ApiResponse (*endpoint)(const fv::ApiContext&, const fv::ApiRequest&)) {
    const fv::ApiResponse response = endpoint(c, r);
    if (response.status != 200)
      throw std::runtime_error("risk_bench: the endpoint answered " + std::to_string(response.status) + ": " +
                               (response.body ? *response.body : std::string()));
    last_body = response.body;
  };

  // ---- the cold query: the process's first, then a fresh risk model cache each time ----
  const auto first_start = Clock::now();
  call(context, get_json, fv::stored_portfolio_risk_endpoint);
  const double first_us = micros(first_start, Clock::now());
  std::vector<double> cold_us, load_us;
  fs::Database& db = context.database();
  const fp::WindowPick pick = fp::pick_window(db, fp::WindowQuery{kModel, std::nullopt, {}});
  for (int i = 0; i < a.cold; ++i) {
    fv::RiskModelCache empty(fv::kRiskModelWindows);
    const fv::ApiContext cold_context = make_context(&empty);
    const auto t0 = Clock::now();
    call(cold_context, get_json, fv::stored_portfolio_risk_endpoint);
    cold_us.push_back(micros(t0, Clock::now()));
    const auto t1 = Clock::now();
    sink = sink + double(fp::load_window_risk_model(db, pick)->risk.factors());
    load_us.push_back(micros(t1, Clock::now()));
  }

  // ---- the model and weights as the endpoint sees them ----
  const std::shared_ptr<const fp::WindowRiskModel> window = fp::load_window_risk_model(db, pick);
  const fe::RiskModel& model = window->risk;
  const auto stored_book = fs::read_portfolio(db, kBook);
  const auto stored_index = fs::read_portfolio(db, kIndex);
  if (!stored_book || !stored_index) throw std::runtime_error("risk_bench: the stored portfolios are missing");
  book = stored_book->holdings;

  nlohmann::ordered_json post = {{"weights", nlohmann::ordered_json::object()}};
  for (const fe::Holding& h : book) post["weights"][h.asset] = h.weight;
  const std::string post_body = post.dump();
  fv::ApiRequest post_json = risk_request("POST", {});
  post_json.content_type = "application/json";
  post_json.body = post_body;

  std::printf("{\"bench\":\"risk_config\",\"assets\":%lld,\"dates\":%lld,\"window\":%d,\"factors\":%d,"
              "\"method\":\"%s\",\"names\":%lld,\"benchmark_names\":%zu,\"modelled\":%zu,\"queries\":%d,"
              "\"warmup\":%d,\"setup_seconds\":%.2f,\"fit_seconds\":%.3f,\"post_body_bytes\":%zu}\n",
              static_cast<long long>(a.assets), static_cast<long long>(a.dates), a.window, a.factors,
              a.method.c_str(), static_cast<long long>(a.names), stored_index->holdings.size(),
              model.assets().size(), a.queries, a.warmup, setup_seconds, fit_seconds, post_body.size());
  emit("risk", "cold_first", summarise({first_us}), 1,
       "\"what\":\"the process's first query: opens this thread's connection, reads and indexes the window\"");
  emit("risk", "cold", summarise(cold_us), a.cold,
       "\"what\":\"GET JSON, no benchmark, with an empty risk model cache: the window read and indexed\"");
  emit("risk", "load_window_risk_model", summarise(load_us), a.cold);

  // ---- warm queries ----
  std::map<std::string, Latency> ours;
  std::map<std::string, std::size_t> bytes;
  if (a.runs("engine")) {
    ours["engine"] = time_calls(a.warmup, a.queries, [&] { sink = sink + fe::portfolio_risk(model, book).total.variance; });
    emit("risk", "engine", ours["engine"], a.queries);
  }
  // The peer right after, on the very same model, weights and figures: the two are
  // seconds apart, so that this machine's drift from minute to minute (see
  // docs/performance.md) shows as little as it can in their ratio.
  nlohmann::json peer;
  if (a.peer != "none" && a.runs("peer") && a.runs("engine")) {
    const std::string peer_dir = tmp.path + "/peer";
    std::filesystem::create_directories(peer_dir);
    write_peer_files(peer_dir, model, book, fe::portfolio_risk(model, book));
    peer = run_peer(a, peer_dir);
  }
  struct EndpointCase {
    const char* name;
    const fv::ApiRequest* request;
    fv::ApiResponse (*endpoint)(const fv::ApiContext&, const fv::ApiRequest&);
  };
  const EndpointCase cases[] = {
      {"get_json", &get_json, fv::stored_portfolio_risk_endpoint},
      {"get_json_benchmark", &get_json_bench, fv::stored_portfolio_risk_endpoint},
      {"get_csv", &get_csv, fv::stored_portfolio_risk_endpoint},
      {"get_csv_benchmark", &get_csv_bench, fv::stored_portfolio_risk_endpoint},
      {"post_json", &post_json, fv::posted_weights_risk_endpoint},
  };
  for (const EndpointCase& c : cases) {
    if (!a.runs(c.name)) continue;
    ours[c.name] = time_calls(a.warmup, a.queries, [&] { call(context, *c.request, c.endpoint); });
    bytes[c.name] = last_body->size();
    emit("risk", c.name, ours[c.name], a.queries, "\"body_bytes\":" + std::to_string(last_body->size()));
    if (!a.save_bodies.empty()) {
      std::ofstream f(a.save_bodies + "/" + c.name + ".body", std::ios::binary);
      f << *last_body;
    }
  }

  // The body the daemon sends is the view's JSON as the CLI gets it (compact here).
  if (a.runs("get_json")) {
    fp::RiskRequest q;
    q.window = fp::WindowQuery{kModel, std::nullopt, {}};
    q.portfolio = kBook;
    q.no_benchmark = true;
    const std::string expected = fv::risk_json(fp::answer_risk(db, q, pick, window).report, {true, 0}).dump();
    const auto body = fv::stored_portfolio_risk_endpoint(context, get_json).body;
    if (*body != expected) throw std::runtime_error("risk_bench: the GET body differs from risk_json(...).dump()");
  }

  // ---- the GET path in parts ----
  const int s = a.split_queries, u = std::min(a.warmup, s);
  fp::RiskRequest q_plain, q_bench;
  q_plain.window = q_bench.window = fp::WindowQuery{kModel, std::nullopt, {}};
  q_plain.portfolio = q_bench.portfolio = kBook;
  q_plain.no_benchmark = true;
  const fv::RiskViewOptions view{true, 0};
  const fp::RiskReport plain = fp::answer_risk(db, q_plain, pick, window).report;
  const fp::RiskReport benched = fp::answer_risk(db, q_bench, pick, window).report;
  const nlohmann::ordered_json plain_json = fv::risk_json(plain, view);
  const nlohmann::ordered_json benched_json = fv::risk_json(benched, view);
  struct Part {
    const char* name;
    std::function<void()> call;
  };
  const std::vector<Part> parts = {
      {"pick_window", [&] { sink = sink + double(fp::pick_window(db, fp::WindowQuery{kModel, std::nullopt, {}}).model.id); }},
      {"risk_model_cache_find", [&] { sink = sink + double(risk_models.find(std::to_string(pick.model.id) + "|" + pick.stamp.key()) != nullptr); }},
      {"read_portfolio_book", [&] { sink = sink + double(fs::read_portfolio(db, kBook)->holdings.size()); }},
      {"read_portfolio_index", [&] { sink = sink + double(fs::read_portfolio(db, kIndex)->holdings.size()); }},
      {"answer_risk", [&] { sink = sink + double(fp::answer_risk(db, q_plain, pick, window).report.books.size()); }},
      {"answer_risk_benchmark", [&] { sink = sink + double(fp::answer_risk(db, q_bench, pick, window).report.books.size()); }},
      {"engine_index", [&] { sink = sink + fe::portfolio_risk(model, stored_index->holdings).total.variance; }},
      {"risk_json_build", [&] { sink = sink + double(fv::risk_json(plain, view).size()); }},
      {"risk_json_build_benchmark", [&] { sink = sink + double(fv::risk_json(benched, view).size()); }},
      {"json_dump", [&] { sink = sink + double(plain_json.dump().size()); }},
      {"json_dump_benchmark", [&] { sink = sink + double(benched_json.dump().size()); }},
      {"risk_csv", [&] { sink = sink + double(fv::risk_csv(plain, view).size()); }},
      {"risk_csv_benchmark", [&] { sink = sink + double(fv::risk_csv(benched, view).size()); }},
      {"parse_post_body", [&] { sink = sink + double(fv::parse_json_body(post_body).size()); }},
  };
  if (a.runs("split"))
    for (const Part& p : parts) emit("risk_split", p.name, time_calls(u, s, p.call), s);

  const Latency& engine = ours["engine"];
  if (peer.is_object()) {
    std::printf("{\"bench\":\"risk_ratio\",\"case\":\"engine\",\"peer_over_ours_p50\":%.3f,\"peer_over_ours_p99\":%.3f,"
                "\"peer_max_relative_difference\":%.3g,\"peer_agrees\":%s}\n",
                peer.value("p50_us", 0.0) / engine.p50, peer.value("p99_us", 0.0) / engine.p99,
                peer.value("max_relative_difference", NAN), peer.value("agrees", false) ? "true" : "false");
  }

  // ---- the table ----
  std::printf("\nRisk queries: %lld names in a %lld-asset window, k = %d (%s); %d queries after %d warm-up, "
              "microseconds\n",
              static_cast<long long>(a.names), static_cast<long long>(a.assets), a.factors, a.method.c_str(),
              a.queries, a.warmup);
  std::printf("%-44s %9s %9s %9s %9s %11s\n", "case", "p50", "p90", "p99", "max", "body bytes");
  auto row = [](const std::string& label, const Latency& l, const std::string& body) {
    std::printf("%-44s %9.1f %9.1f %9.1f %9.1f %11s\n", label.c_str(), l.p50, l.p90, l.p99, l.max, body.c_str());
  };
  if (a.runs("engine")) row("engine::portfolio_risk", engine, "");
  if (peer.is_object()) {
    Latency l;
    l.p50 = peer.value("p50_us", 0.0);
    l.p90 = peer.value("p90_us", 0.0);
    l.p99 = peer.value("p99_us", 0.0);
    l.max = peer.value("max_us", 0.0);
    row("numpy peer (same computation)", l, "");
  }
  const std::map<std::string, std::string> labels = {
      {"get_json", "GET JSON, no benchmark (1 book)"},
      {"get_json_benchmark", "GET JSON, with benchmark (3 books)"},
      {"get_csv", "GET CSV, no benchmark"},
      {"get_csv_benchmark", "GET CSV, with benchmark"},
      {"post_json", "POST JSON weights"},
  };
  for (const EndpointCase& c : cases)
    if (a.runs(c.name)) row(labels.at(c.name), ours[c.name], std::to_string(bytes[c.name]));
  const Latency cold = summarise(cold_us);
  row("cold (window read and indexed; p50 of " + std::to_string(a.cold) + ")", cold, "");
  std::printf("first query of the process (opens the connection): %.1f us\n", first_us);
  if (peer.is_object())
    std::printf("peer / ours, engine: p50 %.2f, p99 %.2f; figures agree to %.2g relative (%s)\n",
                peer.value("p50_us", 0.0) / engine.p50, peer.value("p99_us", 0.0) / engine.p99,
                peer.value("max_relative_difference", NAN), peer.value("agrees", false) ? "within 1e-10" : "NOT within 1e-10");
  for (const EndpointCase& c : cases)
    if (a.runs(c.name))
      std::printf("target p99 < 5000 us, %-34s %s (p99 %.1f us)\n", labels.at(c.name).c_str(),
                ours[c.name].p99 < 5000 ? "met" : "MISSED", ours[c.name].p99);
  std::fflush(stdout);
  return sink == 12345.678 ? 1 : 0;  // keeps `sink` (and so every timed call) alive
}
