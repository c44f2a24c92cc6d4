// Where the time of one fit goes: times the engine's internal stages separately on
// the planted benchmark panel (white-box: includes engine/src headers), plus the
// machine's read bandwidth, which sets the floor for one pass over the panel.
//
//   stage_bench --assets N [--periods T] [--factors K] [--repeat R] [--only gram]
//
// --only gram stops after the Gram matrix (the yardstick of the PCA target at each size).
//
// Prints one JSON line per stage: {"bench":"stage","stage":...,"seconds":median,...}.
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <functional>
#include <string>
#include <vector>

#include "canonical.h"
#include "eigen_top.h"
#include "factorwatch/engine/fit.h"
#include "max_likelihood.h"
#include "moments.h"
#include "pca.h"
#include "planted_panel.h"
#include "prepare.h"

namespace fe = factorwatch::engine;
namespace fd = factorwatch::engine::detail;
namespace fb = factorwatch::bench;

namespace {

double median(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  const std::size_t n = v.size();
  return n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

// Median wall time of `repeat` calls (after one untimed warm-up call).
double time_it(int repeat, const std::function<void()>& call) {
  call();
  std::vector<double> t;
  for (int r = 0; r < repeat; ++r) {
    const auto t0 = std::chrono::steady_clock::now();
    call();
    t.push_back(std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count());
  }
  return median(t);
}

long long g_assets = 0;  // N of this run, on every line so that runs at several sizes can be told apart

void emit(const char* stage, double seconds, const std::string& extra = "") {
  std::printf("{\"bench\":\"stage\",\"assets\":%lld,\"stage\":\"%s\",\"seconds\":%.6g%s%s}\n", g_assets, stage,
              seconds, extra.empty() ? "" : ",", extra.c_str());
  std::fflush(stdout);
}

// Sum of a buffer with both threads (Eigen's vectorised sum, several accumulators):
// bytes per second actually read.
double read_bandwidth(std::size_t bytes, int repeat) {
  Eigen::VectorXd buffer = Eigen::VectorXd::Ones(Eigen::Index(bytes / sizeof(double)));
  volatile double sink = 0;
  const double seconds = time_it(repeat, [&] {
    const Eigen::Index n = buffer.size(), chunk = 1 << 16;
    const Eigen::Index chunks = (n + chunk - 1) / chunk;
    double total = 0;
#ifdef _OPENMP
#pragma omp parallel for reduction(+ : total) schedule(static)
#endif
    for (Eigen::Index c = 0; c < chunks; ++c)
      total += buffer.segment(c * chunk, std::min(chunk, n - c * chunk)).sum();
    sink = sink + total;
  });
  return double(bytes) / seconds;
}

}  // namespace

int main(int argc, char** argv) {
  fb::Index N = 5000, T = 504;
  int k = 10, repeat = 5;
  bool gram_only = false;
  for (int i = 1; i < argc; i += 2) {
    const std::string flag = argv[i];
    const long long v = i + 1 < argc ? std::atoll(argv[i + 1]) : 0;
    if (flag == "--only" && i + 1 < argc && std::string(argv[i + 1]) == "gram") gram_only = true;
    else if (flag == "--assets" && v >= 20) N = v;
    else if (flag == "--periods" && v >= 20) T = v;
    else if (flag == "--factors" && v >= 1) k = int(v);
    else if (flag == "--repeat" && v >= 1) repeat = int(v);
    else {
      std::fprintf(stderr, "usage: stage_bench --assets N [--periods T] [--factors K] [--repeat R] [--only gram]\n");
      return 2;
    }
  }
  const fb::Index total = T + 1;
  const double panel_bytes = 8.0 * double(T) * double(N);
  g_assets = static_cast<long long>(N);
  std::printf("{\"bench\":\"stage_config\",\"assets\":%lld,\"periods\":%lld,\"factors\":%d,\"repeat\":%d}\n",
              static_cast<long long>(N), static_cast<long long>(T), k, repeat);

  fe::ReturnsPanel today;
  today.values = fb::planted_rows(total, N, 1, T);
  today.dates = fb::business_dates(1, T);
  today.assets = fb::asset_names(N);
  fe::FitOptions options;
  options.factors = k;

  char extra[256];
  if (gram_only) {
    const fd::PreparedData prepared = fd::prepare(today, options);
    Eigen::MatrixXd G;
    const double gram_s = time_it(repeat, [&] { G = fd::gram_matrix(*prepared.moments->panel()); });
    std::snprintf(extra, sizeof extra, "\"gflop_per_s\":%.1f", double(T) * double(T + 1) * double(N) / gram_s / 1e9);
    emit("gram_matrix", gram_s, extra);
    return 0;
  }

  // Memory floor: bytes of one panel pass over the measured read bandwidth.
  const double bw_panel = read_bandwidth(std::size_t(panel_bytes), 20);
  const double bw_dram = read_bandwidth(std::size_t(1) << 30, 5);
  std::snprintf(extra, sizeof extra, "\"bytes\":%.0f,\"gb_per_s\":%.2f,\"dram_gb_per_s\":%.2f,\"dram_pass_seconds\":%.6g",
                panel_bytes, bw_panel / 1e9, bw_dram / 1e9, panel_bytes / bw_dram);
  emit("panel_read_floor", panel_bytes / bw_panel, extra);

  fd::PreparedData prepared;
  emit("prepare", time_it(repeat, [&] { prepared = fd::prepare(today, options); }));
  const fd::SecondMoments& S = *prepared.moments;
  const fe::RowMatrix& X = *S.panel();

  Eigen::MatrixXd G;
  const double gram_s = time_it(repeat, [&] { G = fd::gram_matrix(X); });
  std::snprintf(extra, sizeof extra, "\"gflop_per_s\":%.1f", double(T) * double(T + 1) * double(N) / gram_s / 1e9);
  emit("gram_matrix", gram_s, extra);

  const int wanted = 2 * k + 10;
  fd::TopEigen spectrum;
  const double top_s = time_it(repeat, [&] {
    spectrum = fd::top_eigenpairs(S, wanted, k, nullptr, fe::SolverChoice::automatic, options.seed);
  });
  emit("top_eigenpairs_total", top_s, "\"path\":\"" + spectrum.path + "\",\"count\":" + std::to_string(wanted));
  {
    Eigen::MatrixXd Gd = G;  // the Gram route's small problems, on the T x T matrix
    const fd::DenseMoments gram_moments(Gd);
    emit("spectra_on_gram_30", time_it(repeat, [&] {
           fd::top_eigenpairs(gram_moments, wanted, wanted, nullptr, fe::SolverChoice::matrix_free, options.seed);
         }));
    emit("spectra_on_gram_10", time_it(repeat, [&] {
           fd::top_eigenpairs(gram_moments, k, k, nullptr, fe::SolverChoice::matrix_free, options.seed);
         }));
    emit("dense_eigen_on_gram", time_it(repeat, [&] { fd::dense_top_eigenpairs(Gd, wanted); }));
  }
  // The Gram route maps k eigenvectors back with v_j = X' u_j, one vector at a time.
  Eigen::MatrixXd U = Eigen::MatrixXd::Random(T, k), V(N, k);
  emit("eigenvector_backmap", time_it(repeat, [&] {
         for (int j = 0; j < k; ++j) V.col(j) = X.transpose() * U.col(j);
       }));
  emit("eigenvector_backmap_one_product", time_it(repeat, [&] { V.noalias() = X.transpose() * U; }));

  Eigen::MatrixXd B = Eigen::MatrixXd::Random(N, k) * 0.01, P;
  emit("em_pass_product", time_it(repeat * 4, [&] { S.multiply(B, P); }),
       "\"flops\":" + std::to_string(4.0 * double(T) * double(N) * k));

  Eigen::MatrixXd L0;
  Eigen::VectorXd psi0;
  emit("cold_start_params", time_it(repeat, [&] {
         fd::cold_start(S, spectrum, S.diagonal().sum(), k, L0, psi0);
       }));
  fd::Estimate cold;
  const double em_cold = time_it(repeat, [&] { cold = fd::ml_estimate(S, L0, psi0, options); });
  emit("em_loop_cold", em_cold, "\"passes\":" + std::to_string(cold.iterations) +
                                    ",\"seconds_per_pass\":" + std::to_string(em_cold / cold.iterations));

  // Warm: yesterday's ML fit, on its own prepared panel, then today's loop from it.
  Eigen::MatrixXd Lw;
  Eigen::VectorXd psiw;
  {
    fe::ReturnsPanel yesterday;
    yesterday.values = fb::planted_rows(total, N, 0, T);
    yesterday.dates = fb::business_dates(0, T);
    yesterday.assets = fb::asset_names(N);
    const fe::FactorFit y = fe::fit(yesterday, options);
    Lw = y.loadings;  // covariance basis: basis scale is 1
    psiw = y.specific_variance;
  }
  fd::Estimate warm;
  const double em_warm = time_it(repeat, [&] { warm = fd::ml_estimate(S, Lw, psiw, options); });
  emit("em_loop_warm", em_warm, "\"passes\":" + std::to_string(warm.iterations) +
                                    ",\"seconds_per_pass\":" + std::to_string(em_warm / warm.iterations));

  emit("final_log_likelihood", time_it(repeat, [&] {
         fd::log_likelihood(S, cold.loadings, cold.specific_variance);
       }));
  emit("canonical_form", time_it(repeat, [&] {
         Eigen::MatrixXd L = cold.loadings;
         fd::rotate_to_principal_axes(L, cold.specific_variance);
         fd::order_and_fix_signs(L);
       }));
  emit("fit_pca_total", time_it(repeat, [&] {
         fe::FitOptions o = options;
         o.method = fe::Method::pca;
         fe::fit(today, o);
       }));
  emit("fit_ml_total", time_it(repeat, [&] { fe::fit(today, options); }));
  return 0;
}
