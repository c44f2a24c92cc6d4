// Times one fit configuration on the planted benchmark panel and prints one JSON line.
//
//   fit_bench --assets N [--periods T] [--factors K] [--repeat R]
//             [--write-panel PATH] [--method pca|pca-warm|ml|ml-warm]
//             [--solver automatic|dense|matrix-free] [--eigenvalues E] [--tolerance TOL]
//             [--polish yes|no]
//
// --solver, --eigenvalues and --tolerance set FitOptions::solver, eigenvalues_to_report
// and tolerance (defaults: automatic, 2k + 10, 1e-8), for exploring other settings.
//
// The planted panel has T + 1 rows: "yesterday" is rows 0..T-1, "today" rows 1..T.
// --write-panel writes all T + 1 rows to PATH (see planted_panel.h for the format) and,
// without --method, stops there. One configuration per process, so that the peak
// resident set size (getrusage) belongs to that configuration alone.
//
//   pca      fit(today), method pca; median of R calls
//   ml       cold ML fit of today (tolerance 1e-8); median of R calls
//   ml-warm  ML fit of yesterday (untimed), then R timed fits of today warm-started
//            from it, then one untimed cold fit of today for comparison
//   pca-warm as ml-warm for pca (no start values: the warm part is the products)
//
// The warm modes carry the window products (window_products.h) from yesterday's fit:
// every timed fit starts from a copy of yesterday's (copied untimed), as the next day's
// refit in a rolling refresh does.
#include <sys/resource.h>

#include <algorithm>
#include <cmath>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "factorwatch/engine/fit.h"
#include "planted_panel.h"

namespace fe = factorwatch::engine;
namespace fb = factorwatch::bench;

namespace {

struct Args {
  fb::Index assets = 0;
  fb::Index periods = 504;
  int factors = 10;
  int repeat = 3;
  std::string write_panel;
  std::string method;
  fe::SolverChoice solver = fe::SolverChoice::automatic;
  int eigenvalues = 0;
  double tolerance = 1e-8;
  bool polish = true;  // FitOptions::polish (the Newton stage of ML)
};

[[noreturn]] void usage(const std::string& problem) {
  std::fprintf(stderr,
               "fit_bench: %s\nusage: fit_bench --assets N [--periods T] [--factors K] [--repeat R]\n"
               "                 [--write-panel PATH] [--method pca|pca-warm|ml|ml-warm]\n"
               "                 [--solver automatic|dense|matrix-free] [--eigenvalues E] [--tolerance TOL]\n"
               "                 [--polish yes|no]\n",
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
    else if (flag == "--periods") a.periods = parse_int(flag, value, 20);
    else if (flag == "--factors") a.factors = int(parse_int(flag, value, 1));
    else if (flag == "--repeat") a.repeat = int(parse_int(flag, value, 1));
    else if (flag == "--write-panel") a.write_panel = value;
    else if (flag == "--polish") {
      if (std::string(value) != "yes" && std::string(value) != "no") usage("--polish must be yes or no");
      a.polish = std::string(value) == "yes";
    }
    else if (flag == "--method") a.method = value;
    else if (flag == "--eigenvalues") a.eigenvalues = int(parse_int(flag, value, 1));
    else if (flag == "--tolerance") {
      char* end = nullptr;
      a.tolerance = std::strtod(value, &end);
      if (!end || *end != '\0' || !(a.tolerance > 0 && a.tolerance <= 0.01)) usage("--tolerance must be in (0, 0.01]");
    } else if (flag == "--solver") {
      const std::string v = value;
      if (v == "automatic") a.solver = fe::SolverChoice::automatic;
      else if (v == "dense") a.solver = fe::SolverChoice::dense;
      else if (v == "matrix-free") a.solver = fe::SolverChoice::matrix_free;
      else usage("--solver must be automatic, dense or matrix-free");
    }
    else usage("unknown flag " + flag);
  }
  if (a.assets == 0) usage("--assets is required");
  if (!a.method.empty() && a.method != "pca" && a.method != "pca-warm" && a.method != "ml" && a.method != "ml-warm")
    usage("--method must be pca, pca-warm, ml or ml-warm");
  if (a.method.empty() && a.write_panel.empty()) usage("nothing to do: give --method or --write-panel");
  return a;
}

double seconds_since(std::chrono::steady_clock::time_point t0) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
}

double median(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  const std::size_t n = v.size();
  return n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

long long peak_rss_bytes() {
  rusage u{};
  getrusage(RUSAGE_SELF, &u);
  return static_cast<long long>(u.ru_maxrss) * 1024;  // Linux reports KiB
}

long long current_rss_bytes() {
  std::ifstream status("/proc/self/status");
  std::string line;
  while (std::getline(status, line))
    if (line.rfind("VmRSS:", 0) == 0) return std::atoll(line.c_str() + 6) * 1024;
  return -1;
}

std::string json_string(const std::string& s) {
  std::string out = "\"";
  for (const char c : s) {
    if (c == '"' || c == '\\') out += '\\';
    if (static_cast<unsigned char>(c) < 0x20) continue;
    out += c;
  }
  return out + "\"";
}

std::string json_numbers(const std::vector<double>& v) {
  std::ostringstream os;
  os.precision(17);
  os << '[';
  for (std::size_t i = 0; i < v.size(); ++i) os << (i ? "," : "") << v[i];
  return os.str() + "]";
}

// One line of output, fields in insertion order.
class JsonLine {
 public:
  JsonLine& raw(const std::string& key, const std::string& value) {
    body_ += (body_.empty() ? "" : ",") + json_string(key) + ":" + value;
    return *this;
  }
  JsonLine& str(const std::string& key, const std::string& value) { return raw(key, json_string(value)); }
  JsonLine& num(const std::string& key, double value) {
    if (!std::isfinite(value)) return raw(key, "null");  // JSON has no NaN (pca's criterion)
    std::ostringstream os;
    os.precision(17);
    os << value;
    return raw(key, os.str());
  }
  JsonLine& num(const std::string& key, long long value) { return raw(key, std::to_string(value)); }
  JsonLine& numbers(const std::string& key, const std::vector<double>& v) { return raw(key, json_numbers(v)); }
  void print() const {
    std::printf("{%s}\n", body_.c_str());
    std::fflush(stdout);
  }

 private:
  std::string body_;
};

fe::ReturnsPanel make_panel(fb::Index total_rows, fb::Index assets, fb::Index first, fb::Index rows) {
  fe::ReturnsPanel p;
  p.values = fb::planted_rows(total_rows, assets, first, rows);
  p.dates = fb::business_dates(first, rows);
  p.assets = fb::asset_names(assets);
  return p;
}

struct Timed {
  fe::FactorFit fit;
  double call_seconds = 0;
};

Timed timed_fit(const fe::ReturnsPanel& panel, const fe::FitOptions& options) {
  Timed t;
  const auto t0 = std::chrono::steady_clock::now();
  t.fit = fe::fit(panel, options);
  t.call_seconds = seconds_since(t0);
  return t;
}

std::vector<double> head(const Eigen::VectorXd& v, Eigen::Index n) {
  n = std::min(n, v.size());
  return std::vector<double>(v.data(), v.data() + n);
}

}  // namespace

int main(int argc, char** argv) {
  const Args args = parse(argc, argv);
  const fb::Index T = args.periods, N = args.assets, total = T + 1;
  const long long panel_bytes = 8LL * T * N;

  if (!args.write_panel.empty()) {
    const auto t0 = std::chrono::steady_clock::now();
    fb::write_panel_file(args.write_panel, fb::planted_rows(total, N, 0, total));
    JsonLine()
        .str("bench", "panel")
        .str("path", args.write_panel)
        .num("rows", static_cast<long long>(total))
        .num("assets", static_cast<long long>(N))
        .num("seconds", seconds_since(t0))
        .print();
    if (args.method.empty()) return 0;
    std::fprintf(stderr, "fit_bench: note: writing the panel in the same process inflates peak RSS\n");
  }

  fe::FitOptions options;
  options.factors = args.factors;
  options.tolerance = args.tolerance;
  options.polish = args.polish;
  const bool warm = args.method == "ml-warm" || args.method == "pca-warm";
  options.method = args.method.rfind("pca", 0) == 0 ? fe::Method::pca : fe::Method::max_likelihood;
  options.solver = args.solver;
  options.eigenvalues_to_report = args.eigenvalues;

  std::vector<double> call, estimation;
  fe::FactorFit last;
  JsonLine line;
  line.str("bench", "fit").str("method", args.method).num("assets", static_cast<long long>(N))
      .num("periods", static_cast<long long>(T)).num("factors", static_cast<long long>(args.factors))
      .num("repeat", static_cast<long long>(args.repeat))
      .num("eigenvalues_requested", static_cast<long long>(args.eigenvalues))
      .num("tolerance", args.tolerance);

  long long rss_before = 0;
  fe::FactorFit yesterday_fit;
  fe::WindowProducts yesterday_products;
  if (warm) {
    {
      const fe::ReturnsPanel yesterday = make_panel(total, N, 0, T);
      fe::FitOptions first = options;
      first.products = &yesterday_products;
      yesterday_fit = fe::fit(yesterday, first);
    }  // yesterday's panel is released: a rolling service keeps the fit, not the panel
    if (args.method == "ml-warm")
      options.warm_start = fe::WarmStart{yesterday_fit.assets, yesterday_fit.loadings,
                                         yesterday_fit.specific_variance};
    line.num("yesterday_iterations", static_cast<long long>(yesterday_fit.iterations))
        .str("yesterday_termination", fe::to_string(yesterday_fit.termination));
  }

  const fe::ReturnsPanel today = make_panel(total, N, 1, T);
  rss_before = current_rss_bytes();
  fe::WindowProducts products;
  for (int r = 0; r < args.repeat; ++r) {
    if (warm) {
      products = yesterday_products;
      options.products = &products;
    }
    Timed t = timed_fit(today, options);
    call.push_back(t.call_seconds);
    estimation.push_back(t.fit.fit_seconds);
    last = std::move(t.fit);
  }
  const long long peak = peak_rss_bytes();

  line.num("call_seconds", median(call))
      .num("call_seconds_min", *std::min_element(call.begin(), call.end()))
      .num("call_seconds_first", call.front())
      .num("fit_seconds", median(estimation))
      .numbers("call_seconds_all", call)
      .str("termination", fe::to_string(last.termination))
      .num("iterations", static_cast<long long>(last.iterations))
      .num("em_passes", static_cast<long long>(last.em_passes))
      .num("newton_steps", static_cast<long long>(last.newton_steps))
      .num("largest_scaled_gradient", last.largest_scaled_gradient)
      .num("log_likelihood", last.log_likelihood)
      .num("warm_started", static_cast<long long>(last.warm_started))
      .str("solver_path", last.solver_path)
      .numbers("eigenvalues", head(last.eigenvalues, args.factors))
      .num("assets_fitted", static_cast<long long>(last.assets.size()))
      .num("heywood", static_cast<long long>(std::count(last.heywood.begin(), last.heywood.end(), true)));

  if (warm) {
    // The cold fit of the same window, for the comparison (untimed; the panel is the
    // same size, so the peak RSS recorded above is not affected).
    line.num("products_reused_rows", static_cast<long long>(products.last_update().reused_rows))
        .num("products_computed_rows", static_cast<long long>(products.last_update().computed_rows));
    options.warm_start.reset();
    options.products = nullptr;
    const fe::FactorFit cold = fe::fit(today, options);
    line.num("cold_iterations", static_cast<long long>(cold.iterations))
        .num("cold_log_likelihood", cold.log_likelihood)
        .num("log_likelihood_minus_cold", last.log_likelihood - cold.log_likelihood)
        .num("uniqueness_max_difference_from_cold",
             last.uniqueness.size() == cold.uniqueness.size() ? (last.uniqueness - cold.uniqueness).cwiseAbs().maxCoeff()
                                                              : std::nan(""));
  }
  line.num("rss_before_fit_bytes", rss_before)
      .num("peak_rss_bytes", peak)
      .num("panel_bytes", panel_bytes)
      .num("peak_rss_over_panel", double(peak) / double(panel_bytes))
      .print();
  return last.IsSolutionUsable() ? 0 : 1;
}
