// Varimax and promax rotation (engine/src/rotation.cpp).
//
// Reference: R 4.2.2 stats::varimax and stats::promax on the unrotated k = 4
// maximum-likelihood loadings of Harman74.cor (24 psychological tests, Holzinger and
// Swineford 1939), see tests/reference/make_harman74_rotation.R and the header of
// harman74_varimax_k4.csv. Properties (orthogonality, the criterion, invariances) are
// checked on those loadings and on planted structure (invented block loadings).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <random>
#include <stdexcept>
#include <string>
#include <vector>

#include "factorwatch/engine/rotation.h"
#include "reference_table.h"

namespace {

namespace fw = factorwatch::engine;
namespace fwt = factorwatch::testing;

// --- reading the reference --------------------------------------------------------------

const fwt::ReferenceTable& reference() {
  static const fwt::ReferenceTable table = fwt::read_reference("harman74_varimax_k4.csv");
  return table;
}

// One matrix of the long-format file (solution, matrix, row, column, value; 1-based).
Eigen::MatrixXd reference_matrix(const std::string& solution, const std::string& matrix) {
  const auto& t = reference();
  std::vector<std::size_t> rows;
  Eigen::Index n = 0, k = 0;
  for (std::size_t r = 0; r < t.rows.size(); ++r) {
    if (t.text(r, "solution") != solution || t.text(r, "matrix") != matrix) continue;
    rows.push_back(r);
    n = std::max<Eigen::Index>(n, std::stol(t.text(r, "row")));
    k = std::max<Eigen::Index>(k, std::stol(t.text(r, "column")));
  }
  if (rows.empty()) throw std::runtime_error("no reference matrix " + solution + " " + matrix);
  Eigen::MatrixXd m = Eigen::MatrixXd::Constant(n, k, std::numeric_limits<double>::quiet_NaN());
  for (const std::size_t r : rows)
    m(std::stol(t.text(r, "row")) - 1, std::stol(t.text(r, "column")) - 1) = t.number(r, "value");
  EXPECT_TRUE(m.allFinite()) << solution << " " << matrix << " has missing entries";
  return m;
}

Eigen::MatrixXd unrotated() { return reference_matrix("none", "loadings"); }

fw::RotationOptions options(fw::RotationMethod method, double tolerance, bool normalize = true) {
  fw::RotationOptions o;
  o.method = method;
  o.tolerance = tolerance;
  o.kaiser_normalize = normalize;
  return o;
}

double max_abs(const Eigen::MatrixXd& a) { return a.size() == 0 ? 0.0 : a.cwiseAbs().maxCoeff(); }

// The signed permutation P (k x k) that best maps our columns onto the reference's:
// reference column j is matched with our column of largest absolute congruence, signed to
// agree, so that ours * P is comparable with the reference column for column. Fails the
// test when two reference columns pick the same column of ours.
Eigen::MatrixXd matching(const Eigen::MatrixXd& ours, const Eigen::MatrixXd& ref) {
  const Eigen::Index k = ref.cols();
  Eigen::MatrixXd P = Eigen::MatrixXd::Zero(k, k);
  for (Eigen::Index j = 0; j < k; ++j) {
    const Eigen::VectorXd dots = ours.transpose() * ref.col(j);
    Eigen::Index best = 0;
    dots.cwiseAbs().maxCoeff(&best);
    EXPECT_EQ(P.row(best).cwiseAbs().sum(), 0.0) << "two reference columns match our column " << best;
    P(best, j) = dots[best] < 0 ? -1.0 : 1.0;
  }
  return P;
}

// Kaiser's (1958) varimax criterion: the sum over columns of the variance of the squared
// loadings (of the row-normalised loadings for the normalised variant).
double varimax_criterion(Eigen::MatrixXd L, bool normalize) {
  if (normalize)
    for (Eigen::Index i = 0; i < L.rows(); ++i) L.row(i) /= L.row(i).norm();
  const Eigen::ArrayXXd sq = L.array().square();
  const double n = double(L.rows());
  return ((sq.square().colwise().sum() / n) - (sq.colwise().sum() / n).square()).sum();
}

Eigen::MatrixXd random_orthogonal(Eigen::Index k, std::mt19937_64& rng) {
  std::normal_distribution<double> normal;
  Eigen::MatrixXd g(k, k);
  for (Eigen::Index i = 0; i < g.size(); ++i) g(i) = normal(rng);
  Eigen::HouseholderQR<Eigen::MatrixXd> qr(g);
  return qr.householderQ() * Eigen::MatrixXd::Identity(k, k);
}

// Planted simple structure (invented): 4 blocks of 10 assets, each asset loading 0.4-0.9
// on its block's factor and nothing elsewhere.
Eigen::MatrixXd planted_blocks(std::mt19937_64& rng) {
  std::uniform_real_distribution<double> size(0.4, 0.9);
  Eigen::MatrixXd L = Eigen::MatrixXd::Zero(40, 4);
  for (Eigen::Index i = 0; i < 40; ++i) L(i, i / 10) = size(rng);
  return L;
}

// Correlations of planted oblique factors (invented).
Eigen::MatrixXd planted_factor_correlation() {
  Eigen::MatrixXd phi(4, 4);
  phi << 1.0, 0.3, 0.2, 0.4,  //
      0.3, 1.0, 0.1, 0.3,     //
      0.2, 0.1, 1.0, 0.2,     //
      0.4, 0.3, 0.2, 1.0;
  return phi;
}

// Loadings of orthogonal unit factors with the planted oblique model's common covariance
// B Phi B' (B the blocks), turned by a random orthogonal Q: B C Q with C C' = Phi.
Eigen::MatrixXd planted_oblique(const Eigen::MatrixXd& blocks, const Eigen::MatrixXd& Q) {
  const Eigen::MatrixXd C = planted_factor_correlation().llt().matrixL();
  return blocks * C * Q;
}

// --- against R ----------------------------------------------------------------------------

// Tolerance 1e-13 against R (column for column, no reordering or sign change: the header
// promises R's column order and signs, and T = U V' does not depend on the SVD's sign
// choices). Both sides run the same iteration from the same start with the same stopping
// rule on bitwise-identical input, so they take the same number of sweeps and differ only
// by rounding (Eigen's Jacobi SVD against LAPACK's dgesdd, summation order), amplified by the
// remaining sweeps. Measured (13 sweeps normalised, 14 raw): loadings 2.2e-15 and 3.1e-16,
// rotation matrices 3.9e-15 and 3.3e-16, on loadings below 0.85.
TEST(RotationAgainstR, VarimaxMatchesStatsVarimaxColumnForColumn) {
  const Eigen::MatrixXd L = unrotated();
  for (const bool normalize : {true, false}) {
    const std::string solution = normalize ? "varimax" : "varimax_raw";
    // Reference: R 4.2.2 stats::varimax(L, normalize = TRUE/FALSE, eps = 1e-14).
    const fw::RotationResult r = fw::rotate_loadings(L, options(fw::RotationMethod::varimax, 1e-14, normalize));
    EXPECT_TRUE(r.converged);
    EXPECT_EQ(r.method, fw::RotationMethod::varimax);
    EXPECT_LT(max_abs(r.loadings - reference_matrix(solution, "loadings")), 1e-13) << solution;
    EXPECT_LT(max_abs(r.matrix - reference_matrix(solution, "rotmat")), 1e-13) << solution;
    EXPECT_EQ(r.factor_correlation, Eigen::MatrixXd::Identity(4, 4));
    EXPECT_EQ(r.structure, r.loadings);
  }
}

// At R's default eps = 1e-5 the answer stops 5.2e-5 short of the optimum (file header):
// agreeing to 1e-13 (measured 2.4e-15 varimax, 1.7e-15 promax; 6 sweeps) shows that our
// stopping rule ends on the same sweep as R's, since one sweep more or fewer moves the
// loadings by far more than that (checked below for one fewer).
TEST(RotationAgainstR, DefaultToleranceStopsOnTheSameSweepAsR) {
  const Eigen::MatrixXd L = unrotated();
  // Reference: R 4.2.2 stats::varimax(L) (eps = 1e-5, normalize = TRUE).
  const fw::RotationResult v = fw::rotate_loadings(L, options(fw::RotationMethod::varimax, 1e-5));
  EXPECT_LT(max_abs(v.loadings - reference_matrix("varimax_default", "loadings")), 1e-13);
  EXPECT_LT(max_abs(v.matrix - reference_matrix("varimax_default", "rotmat")), 1e-13);
  // One sweep fewer is far away: the stopping rule is what is being checked.
  fw::RotationOptions short_run = options(fw::RotationMethod::varimax, 1e-5);
  short_run.max_iterations = v.iterations - 1;
  const fw::RotationResult early = fw::rotate_loadings(L, short_run);
  EXPECT_FALSE(early.converged);
  EXPECT_GT(max_abs(early.loadings - reference_matrix("varimax_default", "loadings")), 1e-8);

  // Reference: R 4.2.2 stats::promax(L, m = 4) itself (its inner varimax has eps = 1e-5).
  const fw::RotationResult p = fw::rotate_loadings(L, options(fw::RotationMethod::promax, 1e-5));
  EXPECT_LT(max_abs(p.loadings - reference_matrix("promax_default", "loadings")), 1e-13);
  EXPECT_LT(max_abs(p.matrix - reference_matrix("promax_default", "rotmat")), 1e-13);
  EXPECT_LT(max_abs(p.factor_correlation - reference_matrix("promax_default", "phi")), 1e-13);
}

// Tolerance 1e-13, as for varimax: promax adds a least-squares solve (Householder QR here
// and in lm.fit) and a 4 x 4 inverse of a well-conditioned U'U (cond(T) = 2.7); measured
// 1.5e-15 (pattern), 2.7e-15 (rotation), 8.9e-16 (correlations).
TEST(RotationAgainstR, PromaxMatchesStatsPromaxColumnForColumn) {
  const Eigen::MatrixXd L = unrotated();
  // Reference: stats::promax's steps with varimax(x, eps = 1e-14), m = 4 (promax_steps in
  // make_harman74_rotation.R, checked there to be bitwise stats::promax at eps = 1e-5).
  const fw::RotationResult r = fw::rotate_loadings(L, options(fw::RotationMethod::promax, 1e-14));
  ASSERT_EQ(r.method, fw::RotationMethod::promax);
  EXPECT_TRUE(r.converged);
  EXPECT_LT(max_abs(r.loadings - reference_matrix("promax", "loadings")), 1e-13);
  EXPECT_LT(max_abs(r.matrix - reference_matrix("promax", "rotmat")), 1e-13);
  EXPECT_LT(max_abs(r.factor_correlation - reference_matrix("promax", "phi")), 1e-13);
  // Structure = pattern * Phi (definition, common practice).
  EXPECT_LT(max_abs(r.structure - reference_matrix("promax", "loadings") * reference_matrix("promax", "phi")), 1e-13);
}

// Through the canonical form: same loadings as R up to column order and sign (matched by
// congruence), the signed permutation carried consistently into the rotation matrix and
// the factor correlations. Tolerance 1e-13 as above: a signed permutation is exact
// (measured the same 2.2e-15, 3.1e-16 and 1.5e-15 as column for column).
TEST(RotationAgainstR, FitLoadingsMatchRUpToOrderAndSign) {
  const Eigen::MatrixXd L = unrotated();
  struct Case {
    fw::RotationMethod method;
    bool normalize;
    std::string solution;
  };
  for (const Case& c : {Case{fw::RotationMethod::varimax, true, "varimax"},
                        Case{fw::RotationMethod::varimax, false, "varimax_raw"},
                        Case{fw::RotationMethod::promax, true, "promax"}}) {
    const fw::RotationResult r = fw::rotate_fit_loadings(L, options(c.method, 1e-14, c.normalize));
    const Eigen::MatrixXd ref = reference_matrix(c.solution, "loadings");
    const Eigen::MatrixXd P = matching(r.loadings, ref);
    EXPECT_LT(max_abs(r.loadings * P - ref), 1e-13) << c.solution;
    EXPECT_LT(max_abs(r.matrix * P - reference_matrix(c.solution, "rotmat")), 1e-13) << c.solution;
    const Eigen::MatrixXd phi = c.method == fw::RotationMethod::promax ? reference_matrix(c.solution, "phi")
                                                                       : Eigen::MatrixXd::Identity(4, 4);
    EXPECT_LT(max_abs(P.transpose() * r.factor_correlation * P - phi), 1e-13) << c.solution;
  }
}

// R's factanal(rotation = "varimax" / "promax") rotates at the default eps and then sorts
// the columns by sum of squares and makes each column sum positive (its sortLoadings): the
// same rule as our canonical form when the factor variances are 1, so here the columns
// must agree in order and sign too (no near ties: the column sums of squares are 3.65,
// 2.87, 2.66, 2.29 for varimax and 3.51, 3.17, 2.46, 2.18 for promax). Tolerance 1e-13 as
// above (measured 2.4e-15 and 1.7e-15).
TEST(RotationAgainstR, FitLoadingsOrderAndSignsMatchFactanal) {
  const Eigen::MatrixXd L = unrotated();
  // Reference: R 4.2.2 factanal(factors = 4, covmat = Harman74.cor, rotation = "varimax").
  const fw::RotationResult v = fw::rotate_fit_loadings(L, options(fw::RotationMethod::varimax, 1e-5));
  EXPECT_LT(max_abs(v.loadings - reference_matrix("factanal_varimax", "loadings")), 1e-13);
  // Reference: R 4.2.2 factanal(factors = 4, covmat = Harman74.cor, rotation = "promax").
  const fw::RotationResult p = fw::rotate_fit_loadings(L, options(fw::RotationMethod::promax, 1e-5));
  EXPECT_LT(max_abs(p.loadings - reference_matrix("factanal_promax", "loadings")), 1e-13);
}

// --- the canonical form's own bookkeeping --------------------------------------------------

TEST(RotationCanonicalForm, SignedPermutationIsFoldedIntoEveryMatrix) {
  const Eigen::MatrixXd L = unrotated();
  for (const fw::RotationMethod method : {fw::RotationMethod::varimax, fw::RotationMethod::promax}) {
    const fw::RotationResult raw = fw::rotate_loadings(L, options(method, 1e-14));
    const fw::RotationResult r = fw::rotate_fit_loadings(L, options(method, 1e-14));
    // loadings = standardized_loadings * matrix still holds (header); 1e-14: one 24 x 4
    // product of entries below 1.
    EXPECT_LT(max_abs(r.loadings - L * r.matrix), 1e-14);
    EXPECT_LT(max_abs(r.structure - r.loadings * r.factor_correlation), 1e-14);
    // Phi = (T'T)^-1 with the permuted T too.
    EXPECT_LT(max_abs(r.factor_correlation - (r.matrix.transpose() * r.matrix).inverse()), 1e-13);
    // The permutation is signed: the same loadings as the raw rotation, moved and negated.
    const Eigen::MatrixXd P = matching(raw.loadings, r.loadings);
    EXPECT_EQ(raw.loadings * P, r.loadings);
    EXPECT_EQ(raw.matrix * P, r.matrix);
    // Ordered by variance explained, largest first; column sums positive.
    const Eigen::VectorXd variance = r.loadings.colwise().squaredNorm().transpose().cwiseProduct(
        r.factor_correlation.diagonal());
    for (Eigen::Index j = 1; j < variance.size(); ++j) EXPECT_GE(variance[j - 1], variance[j]);
    for (Eigen::Index j = 0; j < variance.size(); ++j) EXPECT_GT(r.loadings.col(j).sum(), 0);
  }
}

// --- properties ---------------------------------------------------------------------------

// T'T = I to 1e-12: a product of SVD factors, orthogonal to rounding (about 1e-15 for k = 4).
TEST(RotationProperties, VarimaxRotationIsOrthogonal) {
  std::mt19937_64 rng(20261202);
  const Eigen::MatrixXd planted = planted_blocks(rng) * random_orthogonal(4, rng);
  for (const Eigen::MatrixXd& L : {unrotated(), planted})
    for (const bool normalize : {true, false}) {
      const fw::RotationResult r = fw::rotate_loadings(L, options(fw::RotationMethod::varimax, 1e-14, normalize));
      EXPECT_LT(max_abs(r.matrix.transpose() * r.matrix - Eigen::MatrixXd::Identity(4, 4)), 1e-12);
    }
}

// The varimax criterion (Kaiser 1958) of the result is at least that of the input and of
// 50 random orthogonal rotations of it: a property check (varimax is a local maximiser, so
// this is evidence, not proof, of a good optimum). Slack 1e-12 for rounding in the criterion.
// Measured: normalised criterion 0.099 (input), 0.341 (varimax), 0.246 (best random);
// raw 0.036, 0.105, 0.083.
TEST(RotationProperties, VarimaxCriterionBeatsInputAndRandomRotations) {
  const Eigen::MatrixXd L = unrotated();
  std::mt19937_64 rng(20261203);
  for (const bool normalize : {true, false}) {
    const fw::RotationResult r = fw::rotate_loadings(L, options(fw::RotationMethod::varimax, 1e-14, normalize));
    const double best = varimax_criterion(r.loadings, normalize);
    EXPECT_GT(best, varimax_criterion(L, normalize) + 1e-3);  // the rotation does something
    for (int trial = 0; trial < 50; ++trial)
      EXPECT_LE(varimax_criterion(L * random_orthogonal(4, rng), normalize), best + 1e-12) << "trial " << trial;
  }
}

// Rotating varimax loadings again changes nothing: the second run starts at the optimum.
// Tolerance 1e-6: the first run stopped when the criterion grew by less than 1e-14
// (relative); near a maximum the criterion is quadratic in the rotation angle, so the
// angle left is about sqrt(1e-14) = 1e-7 in the worst case. Measured: |T - I| 3.6e-9
// (normalised) and 1.8e-9 (raw), loadings moved 3.2e-9 and 1.4e-9, in 2 sweeps.
TEST(RotationProperties, RotatingARotatedSolutionChangesNothing) {
  const Eigen::MatrixXd L = unrotated();
  for (const bool normalize : {true, false}) {
    const fw::RotationOptions o = options(fw::RotationMethod::varimax, 1e-14, normalize);
    const fw::RotationResult once = fw::rotate_loadings(L, o);
    const fw::RotationResult twice = fw::rotate_loadings(once.loadings, o);
    EXPECT_TRUE(twice.converged);
    EXPECT_LT(max_abs(twice.matrix - Eigen::MatrixXd::Identity(4, 4)), 1e-6);
    EXPECT_LT(max_abs(twice.loadings - once.loadings), 1e-6);
  }
}

// L Phi L' is what the model says about assets; a change of factor basis must not move it.
// 1e-12: two 4 x 4 solves with well-conditioned T (cond 1 for varimax, 2.7 for promax) and
// products of 24 x 4 matrices with entries below 1; measured 2.2e-16 and 4.4e-16.
TEST(RotationProperties, ApplyFactorTransformKeepsCommonCovariance) {
  const Eigen::MatrixXd L = unrotated();
  const Eigen::MatrixXd common = L * L.transpose();
  for (const fw::RotationMethod method : {fw::RotationMethod::varimax, fw::RotationMethod::promax}) {
    const fw::RotationResult r = fw::rotate_loadings(L, options(method, 1e-14));
    Eigen::MatrixXd loadings = L;
    Eigen::MatrixXd phi = Eigen::MatrixXd::Identity(4, 4);
    fw::apply_factor_transform(r.matrix, loadings, phi);
    EXPECT_LT(max_abs(loadings * phi * loadings.transpose() - common), 1e-12) << fw::to_string(method);
    EXPECT_EQ(loadings, L * r.matrix);
    // Starting from uncorrelated unit factors, the new covariance is the rotation's Phi.
    EXPECT_LT(max_abs(phi - r.factor_correlation), 1e-12) << fw::to_string(method);
  }
  // A general invertible T and a non-identity factor covariance (invented numbers). Here
  // cond(T) = 61: the two solves can lose up to about cond(T)^2 eps = 8e-13 relative, so
  // 5e-12 relative to the largest entry of L Phi L'; measured 1.0e-13 relative.
  std::mt19937_64 rng(20261204);
  std::normal_distribution<double> normal;
  Eigen::MatrixXd T(4, 4), A(4, 4);
  for (Eigen::Index i = 0; i < 16; ++i) T(i) = normal(rng), A(i) = normal(rng);
  const Eigen::MatrixXd phi0 = A * A.transpose() + Eigen::MatrixXd::Identity(4, 4);
  Eigen::MatrixXd loadings = L, phi = phi0;
  fw::apply_factor_transform(T, loadings, phi);
  const double scale = max_abs(L * phi0 * L.transpose());
  EXPECT_LT(max_abs(loadings * phi * loadings.transpose() - L * phi0 * L.transpose()), 5e-12 * scale);
  EXPECT_EQ(phi, phi.transpose());
}

TEST(RotationProperties, ApplyFactorTransformRejectsMisuse) {
  Eigen::MatrixXd loadings = unrotated(), phi = Eigen::MatrixXd::Identity(4, 4);
  Eigen::MatrixXd singular = Eigen::MatrixXd::Identity(4, 4);
  singular(3, 3) = 0;
  EXPECT_THROW(fw::apply_factor_transform(singular, loadings, phi), std::invalid_argument);
  EXPECT_THROW(fw::apply_factor_transform(Eigen::MatrixXd::Identity(3, 3), loadings, phi), std::invalid_argument);
  EXPECT_EQ(loadings, unrotated());  // unchanged by a rejected call
}

// Promax factor correlations: unit diagonal (U's columns are scaled for it), symmetric and
// positive definite ((T'T)^-1 for an invertible T). 1e-12: rounding of a 4 x 4 solve
// (measured 8.9e-16 and 1.6e-15 off the unit diagonal; smallest eigenvalues 0.37 and 0.60).
TEST(RotationProperties, PromaxFactorCorrelationIsACorrelationMatrix) {
  std::mt19937_64 rng(20261205);
  const Eigen::MatrixXd blocks = planted_blocks(rng);
  const Eigen::MatrixXd planted = planted_oblique(blocks, random_orthogonal(4, rng));
  for (const Eigen::MatrixXd& L : {unrotated(), planted}) {
    const fw::RotationResult r = fw::rotate_loadings(L, options(fw::RotationMethod::promax, 1e-14));
    ASSERT_EQ(r.method, fw::RotationMethod::promax);
    const Eigen::MatrixXd& phi = r.factor_correlation;
    EXPECT_LT(max_abs(phi.diagonal() - Eigen::VectorXd::Ones(4)), 1e-12);
    EXPECT_EQ(phi, phi.transpose());
    const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(phi);
    EXPECT_GT(es.eigenvalues().minCoeff(), 0);
    EXPECT_LE(phi.cwiseAbs().maxCoeff(), 1 + 1e-12);  // |r| <= 1
  }
}

// Planted oblique simple structure (invented): promax finds the blocks and their factor
// correlations approximately, not exactly: its target x |x|^(m-1) shrinks the varimax
// cross-loadings but keeps them nonzero, so the error falls as the power m grows (checked
// below for m = 2, 4, 6; 4 is R's default). Tolerances 5e-3 (pattern) and 1e-2
// (correlations) at m = 4, measured up to 1.9e-3 and 2.9e-3 over five draws; at m = 2 the
// errors are about 0.035 and 0.078, at m = 6 about 8e-5 and 1.2e-4.
TEST(RotationProperties, PromaxRecoversPlantedObliqueBlocksApproximately) {
  std::mt19937_64 rng(20261208);
  const Eigen::MatrixXd phi0 = planted_factor_correlation();
  for (int trial = 0; trial < 5; ++trial) {
    const Eigen::MatrixXd blocks = planted_blocks(rng);
    const Eigen::MatrixXd L = planted_oblique(blocks, random_orthogonal(4, rng));
    double previous_error = 1;
    for (const double m : {2.0, 4.0, 6.0}) {
      fw::RotationOptions o = options(fw::RotationMethod::promax, 1e-14);
      o.promax_power = m;
      const fw::RotationResult r = fw::rotate_loadings(L, o);
      ASSERT_EQ(r.method, fw::RotationMethod::promax);
      const Eigen::MatrixXd P = matching(r.loadings, blocks);
      const double pattern = max_abs(r.loadings * P - blocks);
      const double phi = max_abs(P.transpose() * r.factor_correlation * P - phi0);
      if (m == 4) {
        EXPECT_LT(pattern, 5e-3) << "trial " << trial;
        EXPECT_LT(phi, 1e-2) << "trial " << trial;
      }
      EXPECT_LT(pattern, previous_error) << "trial " << trial << ", m = " << m;
      previous_error = pattern;
      // Whatever the power, the model is unchanged: pattern Phi pattern' = B Phi0 B'
      // (1e-12: rounding; measured below 1e-15).
      EXPECT_LT(max_abs(r.loadings * r.factor_correlation * r.loadings.transpose() -
                        blocks * phi0 * blocks.transpose()),
                1e-12);
    }
  }
}

// Planted simple structure (invented): blocks rotated by a known random orthogonal Q come
// back as the blocks, up to column order and sign. Perfect simple structure maximises the
// normalised criterion (every normalised row is a unit vector on one axis), so the tolerance
// is the convergence accuracy: 1e-6 as in the re-rotation test (measured 4.7e-9 on the
// loadings, 5.3e-9 on Q T P - I, 14-17 sweeps).
TEST(RotationProperties, VarimaxRecoversPlantedBlocks) {
  std::mt19937_64 rng(20261206);
  for (int trial = 0; trial < 5; ++trial) {
    const Eigen::MatrixXd blocks = planted_blocks(rng);
    const Eigen::MatrixXd Q = random_orthogonal(4, rng);
    for (const bool normalize : {true, false}) {
      const fw::RotationResult r =
          fw::rotate_loadings(blocks * Q, options(fw::RotationMethod::varimax, 1e-14, normalize));
      const Eigen::MatrixXd P = matching(r.loadings, blocks);
      const double diff = max_abs(r.loadings * P - blocks);
      EXPECT_LT(diff, 1e-6) << "trial " << trial << (normalize ? " normalised" : " raw");
      // And the rotation found undoes Q.
      EXPECT_LT(max_abs(Q * r.matrix * P - Eigen::MatrixXd::Identity(4, 4)), 1e-6);
    }
  }
}

// With Kaiser normalisation each row is scaled to unit length first, so multiplying rows
// by positive constants gives the same rotation (to rounding: 1e-12; measured 6.7e-16). Raw
// varimax weights rows by their size, so its rotation moves; that it moves here by more than
// 1e-3 (measured 0.28) shows the scaling is strong enough for the first check to mean something.
TEST(RotationProperties, KaiserNormalisationIgnoresRowScale) {
  const Eigen::MatrixXd L = unrotated();
  std::mt19937_64 rng(20261207);
  std::uniform_real_distribution<double> scale(0.2, 5.0);
  Eigen::VectorXd c(L.rows());
  for (Eigen::Index i = 0; i < c.size(); ++i) c[i] = scale(rng);
  const Eigen::MatrixXd scaled = c.asDiagonal() * L;

  const fw::RotationOptions kaiser = options(fw::RotationMethod::varimax, 1e-14, true);
  const double normalised =
      max_abs(fw::rotate_loadings(scaled, kaiser).matrix - fw::rotate_loadings(L, kaiser).matrix);
  EXPECT_LT(normalised, 1e-12);
  const fw::RotationOptions raw = options(fw::RotationMethod::varimax, 1e-14, false);
  const double unnormalised = max_abs(fw::rotate_loadings(scaled, raw).matrix - fw::rotate_loadings(L, raw).matrix);
  EXPECT_GT(unnormalised, 1e-3);
}

// --- degenerate input ---------------------------------------------------------------------

TEST(RotationDegenerate, NoneAndOneFactorAreTheIdentity) {
  const Eigen::MatrixXd L = unrotated();
  const fw::RotationResult none = fw::rotate_loadings(L, options(fw::RotationMethod::none, 1e-5));
  EXPECT_EQ(none.matrix, Eigen::MatrixXd::Identity(4, 4));
  EXPECT_EQ(none.loadings, L);
  EXPECT_EQ(none.iterations, 0);
  for (const fw::RotationMethod method : {fw::RotationMethod::varimax, fw::RotationMethod::promax}) {
    const fw::RotationResult one = fw::rotate_loadings(L.leftCols(1), options(method, 1e-5));
    EXPECT_EQ(one.matrix, Eigen::MatrixXd::Identity(1, 1));
    EXPECT_EQ(one.loadings, L.leftCols(1));
    EXPECT_EQ(one.factor_correlation, Eigen::MatrixXd::Identity(1, 1));
    const fw::RotationResult zero = fw::rotate_fit_loadings(Eigen::MatrixXd(24, 0), options(method, 1e-5));
    EXPECT_EQ(zero.matrix.size(), 0);
    EXPECT_EQ(zero.loadings.rows(), 24);
    EXPECT_EQ(zero.loadings.cols(), 0);
    const fw::RotationResult empty = fw::rotate_loadings(Eigen::MatrixXd(0, 4), options(method, 1e-5));
    EXPECT_EQ(empty.matrix, Eigen::MatrixXd::Identity(4, 4));
    EXPECT_TRUE(empty.converged);
  }
}

// R's varimax divides a zero row by its zero length and stops in La.svd ("infinite or
// missing values", recorded in the header of harman74_varimax_k4.csv). Here it stays zero, so
// Kaiser-normalised varimax is raw varimax on the row-normalised loadings with that row left
// at zero (the definition of the normalisation; 1e-13 for rounding of the normalisation,
// measured 0: the same operations in the same order).
TEST(RotationDegenerate, ZeroRowStaysZeroUnderKaiserNormalisation) {
  Eigen::MatrixXd L = unrotated();
  L.row(5).setZero();
  Eigen::MatrixXd normalised = L;
  for (Eigen::Index i = 0; i < L.rows(); ++i)
    if (i != 5) normalised.row(i) /= L.row(i).norm();
  const fw::RotationResult by_hand =
      fw::rotate_loadings(normalised, options(fw::RotationMethod::varimax, 1e-14, false));
  for (const fw::RotationMethod method : {fw::RotationMethod::varimax, fw::RotationMethod::promax}) {
    const fw::RotationResult r = fw::rotate_loadings(L, options(method, 1e-14));
    EXPECT_EQ(r.method, method);
    EXPECT_TRUE(r.converged);
    EXPECT_TRUE(r.loadings.allFinite() && r.matrix.allFinite() && r.factor_correlation.allFinite());
    EXPECT_EQ(r.loadings.row(5).cwiseAbs().sum(), 0.0);
    if (method == fw::RotationMethod::varimax) {
      EXPECT_LT(max_abs(r.matrix - by_hand.matrix), 1e-13);
    }
    const fw::RotationResult canonical = fw::rotate_fit_loadings(L, options(method, 1e-14));
    EXPECT_TRUE(canonical.loadings.allFinite());
    EXPECT_LT(max_abs(canonical.loadings - L * canonical.matrix), 1e-14);
  }
}

// Where R 4.2.2 stats::promax(x, m = 4) stops with "system is computationally singular"
// (fewer assets than factors, a zero column, two columns dependent to 1e-9, a column of
// negligible size; the same four matrices are checked in make_harman74_rotation.R, see the
// header of harman74_varimax_k4.csv), varimax still returns an orthogonal rotation and
// promax returns that varimax result, marked varimax.
TEST(RotationDegenerate, PromaxWhereRStopsFallsBackToVarimax) {
  const Eigen::MatrixXd L = unrotated();
  std::vector<Eigen::MatrixXd> cases = {L.topRows(3), L, L, L};
  cases[1].col(2).setZero();
  cases[2].col(2) = L.col(1) + 1e-9 * L.col(0);
  cases[3].col(2) *= 1e-9;
  for (std::size_t c = 0; c < cases.size(); ++c) {
    const fw::RotationResult v = fw::rotate_loadings(cases[c], options(fw::RotationMethod::varimax, 1e-14));
    EXPECT_LT(max_abs(v.matrix.transpose() * v.matrix - Eigen::MatrixXd::Identity(4, 4)), 1e-12) << "case " << c;
    EXPECT_TRUE(v.loadings.allFinite()) << "case " << c;
    const fw::RotationResult p = fw::rotate_loadings(cases[c], options(fw::RotationMethod::promax, 1e-14));
    EXPECT_EQ(p.method, fw::RotationMethod::varimax) << "case " << c;
    EXPECT_EQ(p.matrix, v.matrix) << "case " << c;
    EXPECT_EQ(p.factor_correlation, Eigen::MatrixXd::Identity(4, 4)) << "case " << c;
  }
}

// All-zero loadings: B = 0, every rotation is as good as any other; the identity comes back
// after one sweep, converged (R would sweep on to its limit without changing anything).
TEST(RotationDegenerate, ZeroLoadingsStopAtOnce) {
  for (const bool normalize : {true, false}) {
    const fw::RotationResult r =
        fw::rotate_loadings(Eigen::MatrixXd::Zero(10, 3), options(fw::RotationMethod::varimax, 1e-5, normalize));
    EXPECT_TRUE(r.converged);
    EXPECT_EQ(r.iterations, 1);
    EXPECT_EQ(r.matrix, Eigen::MatrixXd::Identity(3, 3));
    EXPECT_TRUE(r.loadings.isZero(0));
  }
}

TEST(RotationDegenerate, IterationLimitIsReported) {
  fw::RotationOptions o = options(fw::RotationMethod::varimax, 1e-14);
  o.max_iterations = 1;
  const fw::RotationResult r = fw::rotate_loadings(unrotated(), o);
  EXPECT_FALSE(r.converged);
  EXPECT_EQ(r.iterations, 1);
  EXPECT_LT(max_abs(r.matrix.transpose() * r.matrix - Eigen::MatrixXd::Identity(4, 4)), 1e-12);
}

// --- options and names --------------------------------------------------------------------

TEST(RotationOptions, IsValidNamesTheFieldTheValueAndTheRule) {
  EXPECT_TRUE(fw::RotationOptions{}.IsValid(nullptr));
  struct Case {
    fw::RotationOptions options;
    std::string field, value, rule;
  };
  auto with = [](auto change) {
    fw::RotationOptions o;
    o.method = fw::RotationMethod::promax;
    change(o);
    return o;
  };
  const std::vector<Case> cases = {
      {with([](auto& o) { o.tolerance = 0; }), "rotation tolerance", "= 0", "positive finite"},
      {with([](auto& o) { o.tolerance = -1e-6; }), "rotation tolerance", "= -1e-06", "positive finite"},
      {with([](auto& o) { o.tolerance = std::numeric_limits<double>::infinity(); }), "rotation tolerance", "= inf",
       "positive finite"},
      {with([](auto& o) { o.tolerance = std::nan(""); }), "rotation tolerance", "= nan", "positive finite"},
      {with([](auto& o) { o.max_iterations = 0; }), "rotation max_iterations", "= 0", "at least 1"},
      {with([](auto& o) { o.promax_power = 1; }), "promax power", "= 1", "greater than 1"},
      {with([](auto& o) { o.promax_power = std::numeric_limits<double>::infinity(); }), "promax power", "= inf",
       "finite"},
  };
  for (const Case& c : cases) {
    std::string error;
    EXPECT_FALSE(c.options.IsValid(&error));
    EXPECT_FALSE(c.options.IsValid(nullptr));
    EXPECT_NE(error.find(c.field), std::string::npos) << error;
    EXPECT_NE(error.find(c.value), std::string::npos) << error;
    EXPECT_NE(error.find(c.rule), std::string::npos) << error;
    try {
      fw::rotate_loadings(unrotated(), c.options);
      ADD_FAILURE() << "no exception for " << error;
    } catch (const std::invalid_argument& e) {
      EXPECT_EQ(std::string(e.what()), error);
    }
  }
}

TEST(RotationOptions, NamesRoundTrip) {
  for (const fw::RotationMethod m : {fw::RotationMethod::none, fw::RotationMethod::varimax, fw::RotationMethod::promax})
    EXPECT_EQ(fw::parse_rotation(fw::to_string(m)), m);
  EXPECT_STREQ(fw::to_string(fw::RotationMethod::varimax), "varimax");
  EXPECT_STREQ(fw::to_string(fw::RotationMethod::promax), "promax");
  EXPECT_STREQ(fw::to_string(fw::RotationMethod::none), "none");
  EXPECT_FALSE(fw::parse_rotation("Varimax").has_value());
  EXPECT_FALSE(fw::parse_rotation("oblimin").has_value());
  EXPECT_FALSE(fw::parse_rotation("").has_value());
}

}  // namespace
