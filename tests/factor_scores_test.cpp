// Factor scores and residual returns (engine/factor_scores.h).
//
// Sources: the sampling properties of Bartlett's (1937) and Thomson's (1951) regression
// scores, checked on data drawn from a planted orthogonal factor model (invented numbers,
// tests/simulated_model.h); the defining formulas computed densely (Sigma formed, solved);
// identities of linear algebra (residual orthogonality, change of factor basis); and R 4.2.2
// stats::factanal(scores = "Bartlett" / "regression") on the EuStockMarkets returns and on
// datasets::mtcars (tests/reference/factor_scores_r.csv, made by make_factor_scores.R).
#include "factorwatch/engine/factor_scores.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <map>
#include <random>
#include <stdexcept>

#include "factorwatch/engine/factor_basis.h"
#include "reference_table.h"
#include "simulated_model.h"

namespace {

using namespace factorwatch::engine;
namespace fw = factorwatch::testing;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// The planted model as a fit: the TRUE mean, loadings and specific variances, Phi = I.
FactorFit true_fit(const fw::PlantedModel& m) {
  FactorFit f;
  f.termination = Termination::converged;
  f.factors = static_cast<int>(m.loadings.cols());
  f.assets = m.panel.assets;
  f.mean = m.mean;
  f.loadings = m.loadings;
  f.specific_variance = m.specific_variance;
  f.factor_covariance = Eigen::MatrixXd::Identity(m.loadings.cols(), m.loadings.cols());
  return f;
}

Eigen::MatrixXd information(const FactorFit& f) {
  return f.loadings.transpose() * f.specific_variance.cwiseInverse().asDiagonal() * f.loadings;
}

// Sample covariance about zero of the rows of D (the errors have mean zero by theory).
Eigen::MatrixXd second_moment(const Eigen::MatrixXd& D) { return D.transpose() * D / double(D.rows()); }

// Largest entry of W^(1/2) C W^(1/2) - I, W the inverse of the covariance `expected`: the
// sample covariance C in units where the expected one is the identity. For T independent
// normal rows an entry of the whitened second moment has standard deviation sqrt(2 / T) on
// the diagonal and sqrt(1 / T) off it (Wishart moments, Var(s_ab) = (sigma_ab^2 +
// sigma_aa sigma_bb) / T; common practice, stated from memory).
double whitened_gap(const Eigen::MatrixXd& C, const Eigen::MatrixXd& expected) {
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> e(expected);
  const Eigen::MatrixXd w = e.operatorInverseSqrt();
  const Eigen::MatrixXd white = w * C * w;
  return (white - Eigen::MatrixXd::Identity(C.rows(), C.cols())).cwiseAbs().maxCoeff();
}

// Least-squares coefficients B of F_hat = F B (no intercept): the conditional mean
// E[f_hat | f] = A f shows as B = A'.
Eigen::MatrixXd regress(const Eigen::MatrixXd& F, const Eigen::MatrixXd& F_hat) {
  return (F.transpose() * F).ldlt().solve(F.transpose() * F_hat);
}

// Planted model of the sampling tests: few assets, so that M = L' Psi^-1 L is small (its
// eigenvalues are 0.48, 0.64, 3.4 for seed 101 and 0.79, 2.9, 6.1 for seed 102) and the two
// estimators differ clearly (shrinkage (I + M)^-1 M from 0.3 to 0.86).
constexpr int kSampleT = 20000, kSampleN = 10, kSampleK = 3;

// Bartlett's scores with the true L and Psi: f_hat - f = M^-1 L' Psi^-1 e exactly, normal
// with mean 0 and covariance M^-1, independent of f (Bartlett 1937; Lawley and Maxwell 1971,
// chapter on factor scores, from memory). Tolerance: 5 standard deviations of a whitened
// entry, 5 sqrt(2 / T) = 0.050 at T = 20000 (over 6 distinct entries a false alarm has
// probability about 1e-5). The same
// bound rejects the regression estimator's error covariance (checked below), so the check
// tells the two apart.
TEST(FactorScoresSampling, BartlettIsUnbiasedWithErrorCovarianceInverseInformation) {
  const auto m = fw::simulate_planted_model(kSampleT, kSampleN, kSampleK, 101);
  const FactorFit f = true_fit(m);
  const Eigen::MatrixXd M = information(f);
  const FactorScores s = factor_scores(m.panel, f, ScoreMethod::bartlett);
  ASSERT_TRUE(s.unscored.empty());
  const Eigen::MatrixXd D = s.scores - m.factors;
  const double tol = 5 * std::sqrt(2.0 / kSampleT);
  const Eigen::MatrixXd bartlett_cov = M.inverse();
  const Eigen::MatrixXd regression_cov = (Eigen::MatrixXd::Identity(kSampleK, kSampleK) + M).inverse();
  EXPECT_LT(whitened_gap(second_moment(D), bartlett_cov), tol);
  EXPECT_GT(whitened_gap(second_moment(D), regression_cov), 2 * tol) << "the check could not tell the estimators apart";
  std::printf("[ measured ] whitened gap against (L'Psi^-1 L)^-1 %.4f (bound %.4f); against (I + L'Psi^-1 L)^-1 %.4f\n",
              whitened_gap(second_moment(D), bartlett_cov), tol, whitened_gap(second_moment(D), regression_cov));
  // Conditionally unbiased: regressing f_hat on f gives the identity. A coefficient's
  // standard error is sqrt((M^-1)_jj / T) (f has unit variance); 5 of them, the largest.
  const Eigen::MatrixXd B = regress(m.factors, s.scores);
  const double se = std::sqrt(bartlett_cov.diagonal().maxCoeff() / kSampleT);
  EXPECT_LT((B - Eigen::MatrixXd::Identity(kSampleK, kSampleK)).cwiseAbs().maxCoeff(), 5 * se);
  std::printf("[ measured ] |B - I| max %.4f (bound %.4f)\n",
              (B - Eigen::MatrixXd::Identity(kSampleK, kSampleK)).cwiseAbs().maxCoeff(), 5 * se);
  // Mean error 0: 5 standard errors of the mean.
  const Eigen::RowVectorXd mean_error = D.colwise().mean();
  for (int j = 0; j < kSampleK; ++j) EXPECT_LT(std::abs(mean_error[j]), 5 * std::sqrt(bartlett_cov(j, j) / kSampleT));
}

// Thomson's regression scores with the true L and Psi (Phi = I): f_hat = (I + M)^-1 L'Psi^-1 z,
// so E[f_hat | f] = (I + M)^-1 M f (shrunk towards 0) and, over f ~ N(0, I), the error
// f_hat - f = (I + M)^-1 (L' Psi^-1 e - f) has covariance (I + M)^-1 (Thomson 1951; Lawley
// and Maxwell 1971, chapter on factor scores, from memory; both follow from the formula).
// Tolerances as in the Bartlett test: 5 standard deviations.
TEST(FactorScoresSampling, RegressionIsShrunkWithErrorCovarianceInverseOfIdentityPlusInformation) {
  const auto m = fw::simulate_planted_model(kSampleT, kSampleN, kSampleK, 102);
  const FactorFit f = true_fit(m);
  const Eigen::MatrixXd M = information(f);
  const Eigen::MatrixXd I = Eigen::MatrixXd::Identity(kSampleK, kSampleK);
  const FactorScores s = factor_scores(m.panel, f, ScoreMethod::regression);
  ASSERT_TRUE(s.unscored.empty());
  const Eigen::MatrixXd D = s.scores - m.factors;
  const double tol = 5 * std::sqrt(2.0 / kSampleT);
  const Eigen::MatrixXd regression_cov = (I + M).inverse();
  EXPECT_LT(whitened_gap(second_moment(D), regression_cov), tol);
  EXPECT_GT(whitened_gap(second_moment(D), M.inverse()), 2 * tol) << "the check could not tell the estimators apart";
  std::printf("[ measured ] whitened gap against (I + L'Psi^-1 L)^-1 %.4f (bound %.4f); against (L'Psi^-1 L)^-1 %.4f\n",
              whitened_gap(second_moment(D), regression_cov), tol, whitened_gap(second_moment(D), M.inverse()));
  // Shrinkage: f_hat = A f + noise with A = (I + M)^-1 M and noise covariance
  // (I + M)^-1 M (I + M)^-1; each coefficient of the regression of f_hat on f has standard
  // error at most sqrt(max noise variance / T).
  const Eigen::MatrixXd A = (I + M).ldlt().solve(M);
  const Eigen::MatrixXd noise = A * (I + M).inverse();
  const Eigen::MatrixXd B = regress(m.factors, s.scores);
  const double se = std::sqrt(noise.diagonal().maxCoeff() / kSampleT);
  EXPECT_LT((B - A.transpose()).cwiseAbs().maxCoeff(), 5 * se);
  std::printf("[ measured ] |B - A'| max %.4f (bound %.4f); |A - I| max %.4f\n",
              (B - A.transpose()).cwiseAbs().maxCoeff(), 5 * se, (A - I).cwiseAbs().maxCoeff());
  EXPECT_GT((A - I).cwiseAbs().maxCoeff(), 20 * se) << "the shrinkage is too small to see";
}

// A small model with gaps, an oblique factor covariance, a panel column the fit lacks, a
// fit asset the panel lacks, and the panel's columns in another order than the fit's.
struct GappyCase {
  FactorFit fit;
  ReturnsPanel panel;
};

GappyCase gappy_case() {
  constexpr int T = 30, N = 12, k = 3;
  const auto m = fw::simulate_planted_model(T, N + 1, k, 103);
  GappyCase c;
  c.fit = true_fit(m);
  // An oblique basis: L T and Phi = T^-1 T^-T (the model L L' + Psi is unchanged).
  Eigen::MatrixXd basis(k, k);
  basis << 1.0, 0.3, -0.2, 0.1, 0.9, 0.4, -0.3, 0.2, 1.1;
  change_factor_basis(c.fit, basis);
  // The panel: fit assets 0..N-1 in reverse order, plus one column the fit lacks; fit
  // asset N has no column.
  c.panel.dates = m.panel.dates;
  c.panel.values.resize(T, N + 1);
  for (int j = 0; j < N; ++j) {
    c.panel.assets.push_back(m.panel.assets[std::size_t(N - 1 - j)]);
    c.panel.values.col(j) = m.panel.values.col(N - 1 - j);
  }
  c.panel.assets.push_back("NOT_MODELLED");
  c.panel.values.col(N).setConstant(0.05);
  c.panel.values(4, N) = kNaN;  // a gap in the ignored column alone: row 4 stays full
  // Gaps: row 7 misses 3 assets (subtraction path), row 9 misses 8 of 12 (direct path,
  // 4 observed = k + 1), row 11 misses 9 (3 observed < k + 1: unscored), row 13 misses all.
  for (int j : {0, 5, 6}) c.panel.values(7, j) = kNaN;
  for (int j = 0; j < 8; ++j) c.panel.values(9, j) = kNaN;
  for (int j = 0; j < 9; ++j) c.panel.values(11, j) = std::numeric_limits<double>::infinity();
  for (int j = 0; j < N; ++j) c.panel.values(13, j) = kNaN;
  return c;
}

// The defining formulas on one date, dense: the observed modelled assets, Sigma = L Phi L'
// + Psi formed and solved.
Eigen::VectorXd dense_scores(const GappyCase& c, Eigen::Index t, ScoreMethod method) {
  std::vector<Eigen::Index> rows;
  std::vector<double> z;
  for (std::size_t i = 0; i < c.fit.assets.size(); ++i) {
    const auto col = std::find(c.panel.assets.begin(), c.panel.assets.end(), c.fit.assets[i]);
    if (col == c.panel.assets.end()) continue;
    const double x = c.panel.values(t, col - c.panel.assets.begin());
    if (!std::isfinite(x)) continue;
    rows.push_back(static_cast<Eigen::Index>(i));
    z.push_back(x - c.fit.mean[static_cast<Eigen::Index>(i)]);
  }
  const auto n = static_cast<Eigen::Index>(rows.size());
  Eigen::MatrixXd L(n, c.fit.loadings.cols());
  Eigen::VectorXd psi(n), zv(n);
  for (Eigen::Index r = 0; r < n; ++r) {
    L.row(r) = c.fit.loadings.row(rows[std::size_t(r)]);
    psi[r] = c.fit.specific_variance[rows[std::size_t(r)]];
    zv[r] = z[std::size_t(r)];
  }
  const Eigen::MatrixXd& Phi = c.fit.factor_covariance;
  if (method == ScoreMethod::bartlett) {
    const Eigen::MatrixXd Wt = L.transpose() * psi.cwiseInverse().asDiagonal();
    return (Wt * L).fullPivLu().solve(Wt * zv);
  }
  const Eigen::MatrixXd Sigma = L * Phi * L.transpose() + Eigen::MatrixXd(psi.asDiagonal());
  return Phi * L.transpose() * Sigma.fullPivLu().solve(zv);
}

// Tolerance 1e-12 absolute on scores of size about 1 to 3: both sides are a few k x k and
// n x n solves of well-conditioned matrices (cond(Sigma) about 1e2 here), whose rounding is
// of order 1e-15 times the condition number.
TEST(FactorScores, EqualTheDenseFormulasWithGapsAndObliqueFactors) {
  const GappyCase c = gappy_case();
  for (ScoreMethod method : {ScoreMethod::bartlett, ScoreMethod::regression}) {
    const FactorScores s = factor_scores(c.panel, c.fit, method);
    EXPECT_EQ(s.method, method);
    EXPECT_EQ(s.dates, c.panel.dates);
    EXPECT_EQ(s.modelled_assets, 12);
    ASSERT_EQ(s.unscored.size(), 2u) << to_string(method);
    EXPECT_EQ(s.unscored[0].row, 11);
    EXPECT_EQ(s.unscored[1].row, 13);
    EXPECT_NE(s.unscored[0].reason.find("fewer than k + 1 = 4"), std::string::npos) << s.unscored[0].reason;
    EXPECT_EQ(s.assets_used[0], 12);
    EXPECT_EQ(s.assets_used[4], 12);
    EXPECT_EQ(s.assets_used[7], 9);
    EXPECT_EQ(s.assets_used[9], 4);
    EXPECT_EQ(s.assets_used[11], 3);
    EXPECT_EQ(s.assets_used[13], 0);
    double worst = 0;
    for (Eigen::Index t = 0; t < c.panel.periods(); ++t) {
      if (t == 11 || t == 13) {
        EXPECT_TRUE(s.scores.row(t).array().isNaN().all()) << t;
        continue;
      }
      worst = std::max(worst, (s.scores.row(t).transpose() - dense_scores(c, t, method)).cwiseAbs().maxCoeff());
    }
    EXPECT_LT(worst, 1e-12) << to_string(method);
    std::printf("[ measured ] %s: max |engine - dense| = %.2e\n", to_string(method), worst);
  }
}

// z = L f + e holds exactly for every observed entry, and Bartlett's residuals are
// orthogonal in the Psi^-1 metric to the loadings, L'_obs Psi^-1_obs e_obs = 0 (the normal
// equations of weighted least squares); the regression residuals satisfy instead
// L' Psi^-1 e = Phi^-1 f (from (Phi^-1 + M) f = L' Psi^-1 z). Tolerance 1e-10 on sums
// whose terms are about 1 (l / psi ~ 1e2 times e ~ 1e-2) and 1e-15 relative on z.
TEST(FactorScores, ResidualsCompleteTheModelAndBartlettResidualsAreOrthogonal) {
  const GappyCase c = gappy_case();
  std::vector<std::string> asked = c.fit.assets;  // the last one has no column in the panel
  for (ScoreMethod method : {ScoreMethod::bartlett, ScoreMethod::regression}) {
    const FactorScores s = factor_scores(c.panel, c.fit, method);
    const ResidualReturns r = residual_returns(c.panel, c.fit, s, asked);
    ASSERT_EQ(r.residuals.rows(), c.panel.periods());
    ASSERT_EQ(r.residuals.cols(), Eigen::Index(asked.size()));
    EXPECT_EQ(r.assets, asked);
    EXPECT_TRUE(r.residuals.col(12).array().isNaN().all());  // the fit asset the panel lacks
    const Eigen::MatrixXd phi_inverse = c.fit.factor_covariance.inverse();
    for (Eigen::Index t = 0; t < c.panel.periods(); ++t) {
      Eigen::VectorXd normal = Eigen::VectorXd::Zero(3);
      for (Eigen::Index i = 0; i < 12; ++i) {
        const Eigen::Index col = 11 - i;  // the panel holds the fit's assets reversed
        const double x = c.panel.values(t, col), e = r.residuals(t, i);
        if (!std::isfinite(x) || s.scores.row(t).hasNaN()) {
          EXPECT_TRUE(std::isnan(e)) << t << "," << i;
          continue;
        }
        const double z = x - c.fit.mean[i];
        EXPECT_NEAR(z, c.fit.loadings.row(i).dot(s.scores.row(t)) + e, 1e-15 * std::max(1.0, std::abs(z)) + 1e-17);
        normal += c.fit.loadings.row(i).transpose() * e / c.fit.specific_variance[i];
      }
      if (s.scores.row(t).hasNaN()) continue;
      const Eigen::VectorXd expected = method == ScoreMethod::bartlett
                                           ? Eigen::VectorXd::Zero(3)
                                           : Eigen::VectorXd(phi_inverse * s.scores.row(t).transpose());
      EXPECT_LT((normal - expected).cwiseAbs().maxCoeff(), 1e-10) << to_string(method) << " date " << t;
    }
  }
}

// Scores follow the factor basis: for L T and Phi -> T^-1 Phi T^-T (change_factor_basis),
// both estimators give T^-1 f (substitute into the formulas: (T' M T)^-1 T' = T^-1 M^-1 and
// (T' Phi^-1 T + T' M T)^-1 T' = T^-1 (Phi^-1 + M)^-1), and the residuals e = z - L T T^-1 f
// do not change. T oblique (cond about 4) and orthogonal. Tolerance 1e-12 on scores of size
// about 1 (a few k x k solves) and 1e-15 on residuals of size 1e-2.
TEST(FactorScores, FollowAChangeOfFactorBasisAndResidualsDoNot) {
  const GappyCase c = gappy_case();
  Eigen::MatrixXd oblique(3, 3);
  oblique << 0.8, -0.5, 0.1, 0.4, 1.2, 0.3, 0.0, 0.6, 1.5;
  std::mt19937_64 rng(7);
  std::normal_distribution<double> normal;
  Eigen::MatrixXd g(3, 3);
  for (int i = 0; i < 9; ++i) g(i / 3, i % 3) = normal(rng);
  const Eigen::MatrixXd orthogonal = Eigen::HouseholderQR<Eigen::MatrixXd>(g).householderQ();
  for (const Eigen::MatrixXd& T : {oblique, orthogonal}) {
    FactorFit moved = c.fit;
    change_factor_basis(moved, T);
    for (ScoreMethod method : {ScoreMethod::bartlett, ScoreMethod::regression}) {
      const FactorScores before = factor_scores(c.panel, c.fit, method);
      const FactorScores after = factor_scores(c.panel, moved, method);
      const Eigen::MatrixXd expected = before.scores * T.inverse().transpose();  // rows f' T^-T
      const ResidualReturns e_before = residual_returns(c.panel, c.fit, before, c.fit.assets);
      const ResidualReturns e_after = residual_returns(c.panel, moved, after, c.fit.assets);
      for (Eigen::Index t = 0; t < c.panel.periods(); ++t) {
        if (before.scores.row(t).hasNaN()) {
          EXPECT_TRUE(after.scores.row(t).array().isNaN().all());
          continue;
        }
        EXPECT_LT((after.scores.row(t) - expected.row(t)).cwiseAbs().maxCoeff(), 1e-12) << to_string(method) << t;
        for (Eigen::Index i = 0; i < e_before.residuals.cols(); ++i) {
          const double a = e_before.residuals(t, i), b = e_after.residuals(t, i);
          if (std::isnan(a))
            EXPECT_TRUE(std::isnan(b));
          else
            EXPECT_NEAR(a, b, 1e-15) << to_string(method) << t << "," << i;
        }
      }
    }
  }
}

// Reference: R 4.2.2 stats::factanal(x, factors = k, scores = "Bartlett" / "regression",
// rotation = "none"), tests/reference/make_factor_scores.R. R scores the standardized data
// zz = scale(x) (column means, sd() with n - 1) with the correlation-scale loadings and
// uniquenesses. Our engine takes a covariance-scale fit; feeding it L = D Lambda and
// Psi = D^2 U (D the standard deviations) on the raw data gives the same numbers, since
// L' Psi^-1 (x - mu) = Lambda' U^-1 zz and L' Psi^-1 L = Lambda' U^-1 Lambda. The means and
// standard deviations are computed here, the way scale() does, and checked against R's.
// factanal's regression scores use the sample correlation matrix, ours the model's
// L L' + Psi; at an ML optimum they coincide (S Sigma^-1 L = L; the script measured the gap:
// 4.1e-15 and 9.1e-15).
struct RCase {
  std::map<std::string, std::map<std::string, std::map<std::string, double>>> q;  // quantity -> row -> column
  std::vector<std::string> variables;                                             // in R's order
  std::vector<std::string> score_rows;                                            // in R's order
};

RCase r_case(const std::string& name) {
  const fw::ReferenceTable table = fw::read_reference("factor_scores_r.csv");
  RCase c;
  for (std::size_t r = 0; r < table.rows.size(); ++r) {
    if (table.text(r, "case") != name) continue;
    const std::string quantity = table.text(r, "quantity"), row = table.text(r, "row");
    c.q[quantity][row][table.text(r, "column")] = table.number(r, "value");
    if (quantity == "uniqueness") c.variables.push_back(row);
    if (quantity == "bartlett" && table.text(r, "column") == "1") c.score_rows.push_back(row);
  }
  return c;
}

// The data: eustock from eustock_returns.csv, mtcars from its data rows.
ReturnsPanel r_data(const std::string& name, const RCase& c) {
  ReturnsPanel p;
  p.assets = c.variables;
  if (name == "eustock_k1") {
    const fw::ReferenceTable t = fw::read_reference("eustock_returns.csv");
    p.values.resize(Eigen::Index(t.rows.size()), Eigen::Index(c.variables.size()));
    for (std::size_t r = 0; r < t.rows.size(); ++r) {
      p.dates.push_back(*factorwatch::engine::Date::from_iso(t.text(r, "date")));
      for (std::size_t j = 0; j < c.variables.size(); ++j)
        p.values(Eigen::Index(r), Eigen::Index(j)) = t.number(r, c.variables[j]);
    }
    return p;
  }
  const auto& data = c.q.at("data");
  // Rows are cars (car1..car32), not dates: one stand-in date per row, in their order.
  p.values.resize(Eigen::Index(c.score_rows.size()), Eigen::Index(c.variables.size()));
  for (std::size_t r = 0; r < c.score_rows.size(); ++r) {
    p.dates.push_back(factorwatch::engine::Date::from_days(static_cast<std::int32_t>(r)));
    for (std::size_t j = 0; j < c.variables.size(); ++j)
      p.values(Eigen::Index(r), Eigen::Index(j)) = data.at(c.score_rows[r]).at(c.variables[j]);
  }
  return p;
}

void check_against_r(const std::string& name, int k, double score_tolerance) {
  SCOPED_TRACE(name);
  const RCase c = r_case(name);
  const ReturnsPanel all = r_data(name, c);
  const auto n = static_cast<double>(all.periods());
  const Eigen::Index p = all.width();
  // scale(x): column means and sd() with denominator n - 1, over every row.
  const Eigen::RowVectorXd mean = all.values.colwise().mean();
  const Eigen::RowVectorXd sd = ((all.values.rowwise() - mean).colwise().squaredNorm() / (n - 1)).cwiseSqrt();
  FactorFit f;
  f.assets = c.variables;
  f.mean = mean.transpose();
  f.loadings.resize(p, k);
  f.specific_variance.resize(p);
  for (Eigen::Index i = 0; i < p; ++i) {
    const std::string& v = c.variables[std::size_t(i)];
    // Means and sds as R's scale() found them: relative 1e-13 (sums of 32 or 1859 terms in
    // another order; measured below 1e-14).
    EXPECT_NEAR(mean[i], c.q.at("center").at(v).at(""), 1e-13 * std::abs(c.q.at("center").at(v).at(""))) << v;
    EXPECT_NEAR(sd[i], c.q.at("sd").at(v).at(""), 1e-13 * c.q.at("sd").at(v).at("")) << v;
    for (int j = 0; j < k; ++j) f.loadings(i, j) = sd[i] * c.q.at("loading").at(v).at(std::to_string(j + 1));
    f.specific_variance[i] = sd[i] * sd[i] * c.q.at("uniqueness").at(v).at("");
  }
  // The rows R scored: the first score_rows.size() of the data.
  ReturnsPanel scored = all;
  scored.dates.resize(c.score_rows.size());
  scored.values = all.values.topRows(Eigen::Index(c.score_rows.size()));
  for (ScoreMethod method : {ScoreMethod::bartlett, ScoreMethod::regression}) {
    const FactorScores s = factor_scores(scored, f, method);
    const auto& expected = c.q.at(method == ScoreMethod::bartlett ? "bartlett" : "regression");
    double worst = 0, largest = 0;
    for (std::size_t t = 0; t < c.score_rows.size(); ++t) {
      // The scores keep the panel's rows: R's row names are the dates (EuStockMarkets) or, for
      // the cars, stand-in dates one per row (r_data).
      ASSERT_EQ(s.dates[t], scored.dates[t]);
      if (name == "eustock_k1") {
        ASSERT_EQ(s.dates[t].iso(), c.score_rows[t]);
      }
      for (int j = 0; j < k; ++j) {
        const double r = expected.at(c.score_rows[t]).at(std::to_string(j + 1));
        worst = std::max(worst, std::abs(s.scores(Eigen::Index(t), j) - r));
        largest = std::max(largest, std::abs(r));
      }
    }
    EXPECT_LT(worst, score_tolerance) << to_string(method) << " (largest score " << largest << ")";
    std::printf("[ measured ] %s %s: max |ours - R| = %.2e over scores up to %.2f\n", name.c_str(), to_string(method),
                worst, largest);
  }
}

// Tolerance 1e-12 absolute on scores up to about 10 (the 1991 and 1997 crash days in
// eustock): both sides are the same formula on well-conditioned 4 x 4 or 11 x 11 problems;
// only summation order differs (measured differences are printed: 1.6e-15 to 8.9e-15).
TEST(FactorScoresReference, EuStockMarketsOneFactorMatchesRFactanal) { check_against_r("eustock_k1", 1, 1e-12); }
TEST(FactorScoresReference, MtcarsTwoFactorsMatchesRFactanal) { check_against_r("mtcars_k2", 2, 1e-12); }

TEST(FactorScores, MethodNamesRoundTrip) {
  for (ScoreMethod m : {ScoreMethod::bartlett, ScoreMethod::regression}) EXPECT_EQ(parse_score_method(to_string(m)), m);
  EXPECT_EQ(std::string(to_string(ScoreMethod::bartlett)), "bartlett");
  EXPECT_EQ(std::string(to_string(ScoreMethod::regression)), "regression");
  EXPECT_FALSE(parse_score_method("Bartlett"));
  EXPECT_FALSE(parse_score_method(""));
}

// Misuse throws: an inconsistent or unusable model, scores of another panel, residuals of
// an asset the fit does not hold.
TEST(FactorScores, MisuseThrows) {
  const GappyCase c = gappy_case();
  FactorFit bad = c.fit;
  bad.specific_variance[2] = 0;
  EXPECT_THROW(factor_scores(c.panel, bad, ScoreMethod::bartlett), std::invalid_argument);
  bad = c.fit;
  bad.mean.conservativeResize(5);
  EXPECT_THROW(factor_scores(c.panel, bad, ScoreMethod::bartlett), std::invalid_argument);
  bad = c.fit;
  bad.loadings(0, 0) = kNaN;
  EXPECT_THROW(factor_scores(c.panel, bad, ScoreMethod::regression), std::invalid_argument);
  bad = c.fit;
  bad.factor_covariance = Eigen::MatrixXd::Identity(2, 2);
  EXPECT_THROW(factor_scores(c.panel, bad, ScoreMethod::regression), std::invalid_argument);
  const FactorScores s = factor_scores(c.panel, c.fit, ScoreMethod::bartlett);
  EXPECT_THROW(residual_returns(c.panel, c.fit, s, {"NOT_MODELLED"}), std::invalid_argument);
  ReturnsPanel shorter = c.panel;
  shorter.dates.pop_back();
  shorter.values.conservativeResize(shorter.values.rows() - 1, Eigen::NoChange);
  EXPECT_THROW(residual_returns(shorter, c.fit, s, {c.fit.assets[0]}), std::invalid_argument);
}

// Bartlett needs L' Psi^-1 L of the observed assets to be invertible: when the observed
// assets load on two factors only, the date is unscored, while the regression estimator
// (which has the prior Phi^-1) still scores it.
TEST(FactorScores, BartlettLeavesADateUnscoredWhenTheObservedLoadingsAreDegenerate) {
  GappyCase c = gappy_case();
  // Assets 0..5 load only on the first two factors; on date 2 only they are observed.
  for (int i = 0; i < 6; ++i) c.fit.loadings(i, 2) = 0;
  for (Eigen::Index col = 0; col < 12; ++col) {
    const auto i =
        std::find(c.fit.assets.begin(), c.fit.assets.end(), c.panel.assets[std::size_t(col)]) - c.fit.assets.begin();
    if (i >= 6) c.panel.values(2, col) = kNaN;
  }
  // Date 9 observes fit assets 0..3 only (gappy_case): degenerate as well.
  const FactorScores b = factor_scores(c.panel, c.fit, ScoreMethod::bartlett);
  ASSERT_EQ(b.unscored.size(), 4u);
  EXPECT_EQ(b.unscored[0].row, 2);
  EXPECT_EQ(b.unscored[1].row, 9);
  for (int u : {0, 1}) {
    EXPECT_NE(b.unscored[std::size_t(u)].reason.find("do not determine"), std::string::npos)
        << b.unscored[std::size_t(u)].reason;
    EXPECT_TRUE(b.scores.row(b.unscored[std::size_t(u)].row).array().isNaN().all());
  }
  const FactorScores r = factor_scores(c.panel, c.fit, ScoreMethod::regression);
  EXPECT_EQ(r.unscored.size(), 2u);  // dates 11 and 13: too few assets
  EXPECT_TRUE(r.scores.row(2).allFinite());
  EXPECT_TRUE(r.scores.row(9).allFinite());
}

}  // namespace
