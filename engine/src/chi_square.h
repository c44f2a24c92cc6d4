// Upper-tail chi-square probability, for the likelihood-ratio test.
#pragma once

namespace factorwatch::engine::detail {

// Regularised upper incomplete gamma Q(a, x) = Gamma(a, x) / Gamma(a), by the
// series (x < a + 1) or Lentz's continued fraction (Abramowitz and Stegun 6.5.29,
// 6.5.31; Press et al., Numerical Recipes, 3rd ed., section 6.2).
double upper_incomplete_gamma_q(double a, double x);

// P(chi-square with dof degrees of freedom > statistic) = Q(dof/2, statistic/2).
double chi_square_upper_tail(double statistic, double dof);

}  // namespace factorwatch::engine::detail
