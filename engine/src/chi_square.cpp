#include "chi_square.h"

#include <cmath>
#include <limits>

namespace factorwatch::engine::detail {
namespace {

constexpr double kEps = 1e-16;
constexpr int kMaxTerms = 100000;

double lower_series_p(double a, double x) {
  double term = 1.0 / a, sum = term, ap = a;
  for (int n = 0; n < kMaxTerms; ++n) {
    ap += 1.0;
    term *= x / ap;
    sum += term;
    if (std::abs(term) < std::abs(sum) * kEps) break;
  }
  return sum * std::exp(-x + a * std::log(x) - std::lgamma(a));
}

double upper_fraction_q(double a, double x) {
  const double tiny = std::numeric_limits<double>::min() / kEps;
  double b = x + 1.0 - a, c = 1.0 / tiny, d = 1.0 / b, h = d;
  for (int i = 1; i < kMaxTerms; ++i) {
    const double an = -double(i) * (double(i) - a);
    b += 2.0;
    d = an * d + b;
    if (std::abs(d) < tiny) d = tiny;
    c = b + an / c;
    if (std::abs(c) < tiny) c = tiny;
    d = 1.0 / d;
    const double delta = d * c;
    h *= delta;
    if (std::abs(delta - 1.0) < kEps) break;
  }
  return std::exp(-x + a * std::log(x) - std::lgamma(a)) * h;
}

}  // namespace

double upper_incomplete_gamma_q(double a, double x) {
  if (!(a > 0) || std::isnan(x)) return std::nan("");
  if (x <= 0) return 1.0;
  if (std::isinf(x)) return 0.0;
  if (x < a + 1.0) return 1.0 - lower_series_p(a, x);
  return upper_fraction_q(a, x);
}

double chi_square_upper_tail(double statistic, double dof) {
  return upper_incomplete_gamma_q(0.5 * dof, 0.5 * statistic);
}

}  // namespace factorwatch::engine::detail
