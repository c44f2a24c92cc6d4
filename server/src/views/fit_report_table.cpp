// The fit as plain text for a terminal: a summary block, the spectrum, one row per asset
// (a selection when the universe is large), and the caution as the last line.
#include <algorithm>
#include <cmath>
#include <cstdarg>
#include <cstdio>
#include <numeric>
#include <vector>

#include "factorwatch/engine/caution.h"
#include "fit_report.h"
#include "text_format.h"

namespace factorwatch::server {
namespace {

// Beyond this many assets the table shows the extremes only; JSON always has all.
constexpr std::size_t kAllRowsUpTo = 40;
constexpr std::size_t kLargestShown = 20;
constexpr std::size_t kSmallestShown = 10;
constexpr std::size_t kExcludedShown = 10;
constexpr std::size_t kNameWidthCap = 32;

std::string printf_string(const char* format, ...) __attribute__((format(printf, 1, 2)));
std::string printf_string(const char* format, ...) {
  char buffer[1024];
  va_list args;
  va_start(args, format);
  std::vsnprintf(buffer, sizeof buffer, format, args);
  va_end(args);
  return buffer;
}

void line(std::ostream& out, const char* label, const std::string& text) {
  out << printf_string("  %-16s", label) << text << "\n";
}

const char* method_words(engine::Method m) {
  switch (m) {
    case engine::Method::pca: return "principal components (pca)";
    case engine::Method::principal_axis: return "principal axis factoring (principal-axis)";
    case engine::Method::max_likelihood: return "maximum likelihood (ml)";
  }
  return "?";
}

std::string lr_test_words(const engine::FactorFit& f) {
  if (f.method != engine::Method::max_likelihood) return "computed for maximum likelihood (ml) fits only";
  if (!f.lr_test.defined)
    return "not defined here (it needs more observations than assets and positive degrees of freedom)";
  return printf_string("%d-factor model against an unrestricted covariance: statistic %.4f on %g dof, "
                       "p-value %.4g",
                       f.factors, f.lr_test.statistic, f.lr_test.dof, f.lr_test.p_value);
}

void write_summary(std::ostream& out, const engine::FactorFit& f, const FitSource& s) {
  out << "Factor model fit\n";
  line(out, "method", printf_string("%s, %d factor%s, %s basis", method_words(f.method), f.factors,
                                    f.factors == 1 ? "" : "s", engine::to_string(f.basis)));
  if (s.kind == "returns") {
    line(out, "returns file", s.path);
    line(out, "window", printf_string("%s .. %s (%lld of the file's %lld dates), %s", s.first_date.c_str(),
                                      s.last_date.c_str(), static_cast<long long>(f.periods),
                                      static_cast<long long>(s.dates_in_file),
                                      s.half_life ? printf_string("exponential weights, half-life %g dates",
                                                                  *s.half_life).c_str()
                                                  : "equal weights"));
  } else {
    line(out, "matrix file", printf_string("%s, %g observations", s.path.c_str(), s.observations));
  }
  if (s.kind == "returns")
    line(out, "sample", printf_string("T = %lld dates, effective n = %.1f", static_cast<long long>(f.periods),
                                      f.effective_sample_size));
  else
    line(out, "sample", printf_string("n = %.6g observations (as given)", f.effective_sample_size));
  line(out, "assets", printf_string("%zu fitted, %zu excluded", f.assets.size(), f.excluded.size()));
  line(out, "outcome", printf_string("%s after %d iterations, %.3f s", engine::to_string(f.termination),
                                     f.iterations, f.fit_seconds));
  if (std::isfinite(f.largest_scaled_gradient))
    line(out, "criterion", printf_string("largest scaled gradient %.2g (tolerance %.2g)",
                                         f.largest_scaled_gradient, f.tolerance));
  if (!f.message.empty()) line(out, "", f.message);
  line(out, "log-likelihood", printf_string("%.8g per observation (Gaussian, on the basis matrix)", f.log_likelihood));
  line(out, "LR test", lr_test_words(f));
  if (!f.solver_path.empty()) line(out, "solver", f.solver_path);
  if (!f.gap_handling.empty()) line(out, "gaps", f.gap_handling);
}

void write_spectrum(std::ostream& out, const engine::FactorFit& f) {
  out << printf_string("\nLargest eigenvalues of the %s matrix (trace %.6g)\n", engine::to_string(f.basis),
                       f.trace);
  out << "      #     eigenvalue   share of trace   cumulative\n";
  double cumulative = 0;
  for (Eigen::Index i = 0; i < f.eigenvalues.size(); ++i) {
    const double share = f.trace > 0 ? f.eigenvalues[i] / f.trace : 0;
    cumulative += share;
    out << printf_string("  %5lld  %13.6g  %14.1f%%  %10.1f%%\n", static_cast<long long>(i + 1),
                         f.eigenvalues[i], 100 * share, 100 * cumulative);
  }
  if (f.explained_share.size() > 0) {
    std::string shares;
    for (Eigen::Index j = 0; j < f.explained_share.size(); ++j)
      shares += printf_string("%sf%lld %.1f%%", j ? ", " : "", static_cast<long long>(j + 1),
                              100 * f.explained_share[j]);
    out << "  Factors' shares of the trace: " << shares
        << printf_string(" (together %.1f%%)\n", 100 * f.explained_total);
  }
}

// One number format per column so the decimal points line up: about four significant
// digits for the column's largest entry (0.5407 for correlation loadings, 0.01234 for
// daily-return loadings), plain %g when entries are too small for fixed decimals.
struct ColumnFormat {
  int decimals = 4;
  bool general = false;

  explicit ColumnFormat(double largest) {
    if (!(largest > 0) || !std::isfinite(largest)) return;
    const int exponent = static_cast<int>(std::floor(std::log10(largest)));
    decimals = std::max(0, 3 - exponent);
    general = decimals > 9;
  }
  std::string operator()(double v, int width) const {
    if (general) return printf_string("%*.4g", width, v);
    return printf_string("%*.*f", width, decimals, v);
  }
};

double largest_abs(const Eigen::MatrixXd& m, const std::vector<std::size_t>& rows) {
  double out = 0;
  for (std::size_t i : rows) out = std::max(out, m.row(static_cast<Eigen::Index>(i)).cwiseAbs().maxCoeff());
  return out;
}

std::string asset_name(const std::string& name, std::size_t width) {
  const std::string shown = table_text(name);
  if (shown.size() <= width) return shown;
  return shown.substr(0, width - 2) + "..";
}

void write_asset_rows(std::ostream& out, const engine::FactorFit& f) {
  const std::size_t n = f.assets.size();
  if (n == 0 || f.loadings.rows() != static_cast<Eigen::Index>(n)) return;
  std::size_t width = 5;
  for (const auto& a : f.assets) width = std::max(width, std::min(a.size(), kNameWidthCap));

  std::vector<std::size_t> rows(n);
  std::iota(rows.begin(), rows.end(), std::size_t{0});
  std::size_t omitted = 0;
  if (n > kAllRowsUpTo) {
    std::stable_sort(rows.begin(), rows.end(),
                     [&](std::size_t a, std::size_t b) { return f.communality[a] > f.communality[b]; });
    omitted = n - kLargestShown - kSmallestShown;
    rows.erase(rows.begin() + kLargestShown, rows.end() - kSmallestShown);
    out << printf_string("\nAssets: the %zu with the largest and the %zu with the smallest communality\n",
                         kLargestShown, kSmallestShown);
  } else {
    out << printf_string("\nAssets (%zu)\n", n);
  }

  const ColumnFormat loading_format(largest_abs(f.loadings, rows));
  const ColumnFormat communality_format(largest_abs(f.communality, rows));
  const ColumnFormat specific_format(largest_abs(f.specific_variance, rows));

  std::string head = printf_string("  %-*s", static_cast<int>(width), "asset");
  for (Eigen::Index j = 0; j < f.loadings.cols(); ++j)
    head += printf_string(" %10s", ("f" + std::to_string(j + 1)).c_str());
  head += "  communality  specific var  uniqueness";
  out << head << "\n";

  bool any_heywood = false;
  for (std::size_t r = 0; r < rows.size(); ++r) {
    if (omitted > 0 && r == kLargestShown)
      out << printf_string("  ... %zu assets omitted here (--format json lists every asset)\n", omitted);
    const std::size_t i = rows[r];
    std::string text = printf_string("  %-*s", static_cast<int>(width), asset_name(f.assets[i], width).c_str());
    for (Eigen::Index j = 0; j < f.loadings.cols(); ++j)
      text += " " + loading_format(f.loadings(static_cast<Eigen::Index>(i), j), 10);
    const bool heywood = i < f.heywood.size() && f.heywood[i];
    any_heywood = any_heywood || heywood;
    const auto at = static_cast<Eigen::Index>(i);
    text += "  " + communality_format(f.communality[at], 11) + "  " + specific_format(f.specific_variance[at], 12) +
            printf_string("  %10.4f%s", f.uniqueness[at], heywood ? " *" : "");
    out << text << "\n";
  }
  if (any_heywood) out << "  * specific variance held at its floor (Heywood case)\n";
}

void write_excluded(std::ostream& out, const engine::FactorFit& f) {
  if (f.excluded.empty()) return;
  out << printf_string("\nExcluded assets (%zu)\n", f.excluded.size());
  for (std::size_t i = 0; i < f.excluded.size() && i < kExcludedShown; ++i)
    out << "  " << table_text(f.excluded[i].asset) << ": " << f.excluded[i].reason << "\n";
  if (f.excluded.size() > kExcludedShown)
    out << printf_string("  ... and %zu more (--format json lists them all)\n", f.excluded.size() - kExcludedShown);
}

}  // namespace

void write_fit_report_table(std::ostream& out, const engine::FactorFit& fit, const FitSource& source) {
  write_summary(out, fit, source);
  write_spectrum(out, fit);
  write_asset_rows(out, fit);
  write_excluded(out, fit);
  out << "\n" << engine::kCaution << "\n";
}

}  // namespace factorwatch::server
