#include "prepare.h"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "page_hint.h"
#include "panel_kernels.h"
#include "weights.h"

namespace factorwatch::engine::detail {
namespace {

std::string format(const char* fmt, double a, double b) {
  char buf[160];
  std::snprintf(buf, sizeof buf, fmt, a, b);
  return buf;
}

double median(std::vector<double> v) {
  if (v.empty()) return 0.0;
  const std::size_t mid = v.size() / 2;
  std::nth_element(v.begin(), v.begin() + mid, v.end());
  return v[mid];
}

// Drops assets whose variance is negligible next to the window's typical asset.
void exclude_constant(const FitOptions& options, std::vector<Eigen::Index>& keep,
                      const Eigen::VectorXd& variance_by_column,
                      const std::vector<std::string>& names, std::vector<ExcludedAsset>& excluded) {
  std::vector<double> v;
  for (Eigen::Index c : keep) v.push_back(variance_by_column[c]);
  const double typical = median(v);
  std::vector<Eigen::Index> kept;
  for (Eigen::Index c : keep) {
    const double s = variance_by_column[c];
    if (!(s > options.constant_threshold * typical) || !(s > 0)) {
      excluded.push_back({names[c], format("constant series: variance %.3g is below %.3g of the "
                                           "window's median asset variance",
                                           s, options.constant_threshold)});
    } else {
      kept.push_back(c);
    }
  }
  keep.swap(kept);
}

// Weighted coverage, mean and variance of every column over its observed dates, in
// two streaming passes over the rows (mean first, then squared deviations: the
// two-pass form does not lose precision the way sum-of-squares does). Each thread
// takes a range of rows with its own accumulators; the loops are branch-free so
// that they vectorise.
void column_statistics(const RowMatrix& values, const Eigen::VectorXd& w, Eigen::VectorXd& coverage,
                       Eigen::VectorXd& mean, Eigen::VectorXd& variance) {
  const Eigen::Index T = values.rows(), width = values.cols();
  coverage = Eigen::VectorXd::Zero(width);
  mean = Eigen::VectorXd::Zero(width);
  variance = Eigen::VectorXd::Zero(width);
  // Read only by OpenMP's `if`: unused in a build without OpenMP.
  [[maybe_unused]] const bool parallel = values.size() >= kParallelEntries;
#pragma omp parallel if (parallel)
  {
    Eigen::VectorXd c = Eigen::VectorXd::Zero(width), m = Eigen::VectorXd::Zero(width);
#pragma omp for schedule(static) nowait
    for (Eigen::Index t = 0; t < T; ++t) {
      const double* row = values.data() + t * width;
      const double wt = w[t];
      for (Eigen::Index j = 0; j < width; ++j) {
        const bool ok = std::isfinite(row[j]);
        c[j] += ok ? wt : 0.0;
        m[j] += ok ? wt * row[j] : 0.0;
      }
    }
#pragma omp critical
    {
      coverage += c;
      mean += m;
    }
#pragma omp barrier
#pragma omp single
    for (Eigen::Index j = 0; j < width; ++j)
      if (coverage[j] > 0) mean[j] /= coverage[j];
    // (the implicit barrier after `single` publishes the means)
    Eigen::VectorXd v = Eigen::VectorXd::Zero(width);
#pragma omp for schedule(static) nowait
    for (Eigen::Index t = 0; t < T; ++t) {
      const double* row = values.data() + t * width;
      const double wt = w[t];
      for (Eigen::Index j = 0; j < width; ++j) {
        const double d = std::isfinite(row[j]) ? row[j] - mean[j] : 0.0;
        v[j] += wt * d * d;
      }
    }
#pragma omp critical
    variance += v;
  }
}

// X X' of the prepared panel from the carried raw products R = Z Z' (window_products.h),
// for a gap-free window on the covariance basis, where X_t = sqrt(w_t) (z_t - mu) / sqrt(c)
// on the kept columns, mu = Z'w / c, c the common coverage (the weights' sum). With A = R
// less the excluded columns' part, a = A w / c and m = w'a / c:
//   (X X')_st = sqrt(w_s w_t) / c * (A_st - a_s - a_t + m).
Eigen::MatrixXd gram_from_products(const Eigen::MatrixXd& R, const RowMatrix& Z, const std::vector<Eigen::Index>& keep,
                                   const Eigen::VectorXd& w, double c) {
  Eigen::MatrixXd A = R;
  std::vector<bool> kept(std::size_t(Z.cols()), false);
  for (Eigen::Index j : keep) kept[std::size_t(j)] = true;
  std::vector<Eigen::Index> dropped;
  for (Eigen::Index j = 0; j < Z.cols(); ++j)
    if (!kept[std::size_t(j)]) dropped.push_back(j);
  if (!dropped.empty()) {
    Eigen::MatrixXd E(Z.rows(), Eigen::Index(dropped.size()));
    for (std::size_t i = 0; i < dropped.size(); ++i) E.col(Eigen::Index(i)) = Z.col(dropped[i]);
    A.noalias() -= E * E.transpose();
  }
  const Eigen::VectorXd a = A * w / c;
  const double m = w.dot(a) / c;
  const Eigen::VectorXd root_w = w.cwiseSqrt();
  A.colwise() -= a;
  A.rowwise() -= a.transpose();
  A.array() += m;
  return root_w.asDiagonal() * A * root_w.asDiagonal() / c;
}

}  // namespace

PreparedData prepare(const ReturnsPanel& panel, const FitOptions& options) {
  const Eigen::Index T = panel.periods(), width = panel.width();
  PreparedData out;
  out.periods = T;
  const Eigen::VectorXd w = observation_weights(T, options.weighting, options.half_life);
  out.effective_sample_size = effective_sample_size(w);

  // Coverage, mean and variance of each column over its observed dates.
  Eigen::VectorXd coverage, mean, variance;
  column_statistics(panel.values, w, coverage, mean, variance);

  std::vector<Eigen::Index> keep;
  for (Eigen::Index j = 0; j < width; ++j) {
    if (coverage[j] + 1e-12 < options.min_coverage) {
      out.excluded.push_back({panel.assets[j], format("coverage %.3f is below the minimum %.3f",
                                                      coverage[j], options.min_coverage)});
      continue;
    }
    variance[j] /= coverage[j];
    keep.push_back(j);
  }
  exclude_constant(options, keep, variance, panel.assets, out.excluded);

  const Eigen::Index N = Eigen::Index(keep.size());
  out.columns = keep;
  out.mean.resize(N);
  out.variance.resize(N);
  out.basis_scale.resize(N);
  Eigen::VectorXd column_factor(N);
  for (Eigen::Index i = 0; i < N; ++i) {
    const Eigen::Index c = keep[i];
    out.assets.push_back(panel.assets[c]);
    out.mean[i] = mean[c];
    out.variance[i] = variance[c];
    out.basis_scale[i] = options.basis == Basis::correlation ? std::sqrt(variance[c]) : 1.0;
    column_factor[i] = 1.0 / (std::sqrt(coverage[c]) * out.basis_scale[i]);
  }

  RowMatrix X(T, N);
  advise_huge_pages(X.data(), std::size_t(X.size()) * sizeof(double));
  bool any_gap = false;
#pragma omp parallel for schedule(static) reduction(|| : any_gap) if (panel.values.size() >= kParallelEntries)
  for (Eigen::Index t = 0; t < T; ++t) {
    const double root_w = std::sqrt(w[t]);
    const double* row = panel.values.data() + t * width;
    double* x = X.data() + t * N;
    for (Eigen::Index i = 0; i < N; ++i) {
      const double v = row[keep[std::size_t(i)]];
      const bool observed = std::isfinite(v);
      any_gap = any_gap || !observed;
      x[i] = observed ? root_w * (v - out.mean[i]) * column_factor[i] : 0.0;
    }
  }
  out.gap_handling = any_gap ? "gaps set to the asset's window mean; column rescaled by "
                               "1/sqrt(coverage) so variances use observed dates only"
                             : "no gaps among the fitted assets";
  // Carried products give X X' at O(s T N) for s new dates. They serve the Gram route of
  // wide windows (T < N) on the covariance basis without gaps, when few columns were
  // excluded (each costs T^2 to take out).
  Eigen::MatrixXd carried;
  if (options.products && options.basis == Basis::covariance && T < N) {
    const WindowProducts::Update& u = options.products->update(panel);
    if (u.usable && !any_gap && 8 * (width - N) <= N)
      carried = gram_from_products(options.products->raw(), panel.values, keep, w, coverage[keep.front()]);
  }
  // diag(X'X) is the variance on the basis scale (1 for correlation), known already.
  auto moments = std::make_unique<PanelMoments>(std::move(X), out.variance.cwiseQuotient(out.basis_scale.cwiseAbs2()));
  if (carried.size()) moments->set_gram(std::move(carried));
  out.moments = std::move(moments);
  return out;
}

PreparedData prepare(const CovarianceInput& input, const FitOptions& options) {
  const Eigen::Index width = input.matrix.rows();
  PreparedData out;
  out.periods = Eigen::Index(std::llround(input.observations));
  out.effective_sample_size = input.observations;
  out.gap_handling = "not applicable: matrix given";

  std::vector<Eigen::Index> keep;
  Eigen::VectorXd variance = input.matrix.diagonal();
  for (Eigen::Index j = 0; j < width; ++j) keep.push_back(j);
  exclude_constant(options, keep, variance, input.assets, out.excluded);

  const Eigen::Index N = Eigen::Index(keep.size());
  out.columns = keep;
  out.mean = Eigen::VectorXd::Zero(N);
  out.variance.resize(N);
  out.basis_scale.resize(N);
  for (Eigen::Index i = 0; i < N; ++i) {
    out.assets.push_back(input.assets[keep[i]]);
    out.variance[i] = variance[keep[i]];
    out.basis_scale[i] =
        options.basis == Basis::correlation ? std::sqrt(variance[keep[i]]) : 1.0;
  }
  Eigen::MatrixXd S(N, N);
  for (Eigen::Index i = 0; i < N; ++i)
    for (Eigen::Index j = 0; j < N; ++j)
      S(i, j) = input.matrix(keep[i], keep[j]) / (out.basis_scale[i] * out.basis_scale[j]);
  out.moments = std::make_unique<DenseMoments>(std::move(S));
  return out;
}

}  // namespace factorwatch::engine::detail
