// Aligning a window's factors onto a reference: orthogonal Procrustes against scipy,
// principal angles against scipy, exact recovery of planted rotations, reflections and
// column swaps, shared-asset handling, statuses, Tucker congruence, the smoothed
// reference, and the invariance of risk under the alignment.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <map>
#include <random>
#include <stdexcept>

#include "factorwatch/engine/alignment.h"
#include "reference_table.h"

namespace {

namespace fe = factorwatch::engine;
using factorwatch::testing::read_reference;

constexpr double kPi = 3.14159265358979323846;

// ---------------------------------------------------------------------------------------
// scipy reference cases (tests/reference/procrustes_reference.csv, long format)

struct ScipyCase {
  Eigen::MatrixXd a, b, r;
  double scale = std::nan("");
  Eigen::VectorXd angles_descending;  // scipy's order
};

std::map<std::string, ScipyCase> scipy_cases() {
  const auto t = read_reference("procrustes_reference.csv");
  // First pass: the size of every (case, item); second pass: the values.
  std::map<std::string, std::map<std::string, std::pair<int, int>>> sizes;
  for (std::size_t i = 0; i < t.rows.size(); ++i) {
    auto& s = sizes[t.text(i, "case")][t.text(i, "item")];
    s.first = std::max(s.first, int(t.number(i, "row")) + 1);
    s.second = std::max(s.second, int(t.number(i, "col")) + 1);
  }
  std::map<std::string, ScipyCase> cases;
  std::map<std::string, std::map<std::string, Eigen::MatrixXd>> m;
  for (const auto& [name, items] : sizes)
    for (const auto& [item, size] : items) m[name][item] = Eigen::MatrixXd::Constant(size.first, size.second, std::nan(""));
  for (std::size_t i = 0; i < t.rows.size(); ++i)
    m[t.text(i, "case")][t.text(i, "item")](int(t.number(i, "row")), int(t.number(i, "col"))) = t.number(i, "value");
  for (auto& [name, items] : m) {
    ScipyCase c;
    c.a = items.at("A");
    c.b = items.at("B");
    if (items.count("R")) {
      c.r = items.at("R");
      c.scale = items.at("scale")(0, 0);
    }
    c.angles_descending = items.at("angle").col(0);
    cases[name] = c;
  }
  return cases;
}

TEST(ScipyReference, FileHoldsTheExpectedCases) {
  const auto cases = scipy_cases();
  ASSERT_EQ(cases.size(), 6u);
  EXPECT_EQ(cases.at("harman74_k4_rotated").a.rows(), 24);
  EXPECT_EQ(cases.at("seeded_200x10_noisy").a.cols(), 10);
  EXPECT_EQ(cases.at("seeded_40x6_40x3").b.cols(), 3);
  for (const auto& [name, c] : cases) EXPECT_TRUE(c.a.allFinite() && c.b.allFinite()) << name;
}

// Reference: scipy 1.10.1 scipy.linalg.orthogonal_procrustes(A, B), see
// tests/reference/make_procrustes.py. Tolerance 1e-12 per entry: both sides take the SVD
// of the same k x k matrix A'B (k <= 10), and R = U V' moves by about
// eps * s_1 / (s_k-1 + s_k) under rounding (the polar factor's sensitivity); that ratio
// is at most 3.7 for these cases (file header), so agreement near 1e-15 is expected and
// 1e-12 leaves room for the different SVD algorithms (LAPACK gesdd, Eigen's Jacobi).
TEST(ScipyReference, ProcrustesRotationMatchesScipy) {
  for (const auto& [name, c] : scipy_cases()) {
    if (c.r.size() == 0) continue;
    const Eigen::MatrixXd r = fe::procrustes_rotation(c.a, c.b);
    const double diff = (r - c.r).cwiseAbs().maxCoeff();
    std::printf("  measured %-24s max |R - R_scipy| = %.2e\n", name.c_str(), diff);
    EXPECT_LT(diff, 1e-12) << name;
    // scipy's scale is the sum of the singular values of A'B, which equals trace(R' A' B)
    // at the optimum (A'B = U S V', R = U V'); relative 1e-13 for a sum of k terms.
    const double scale = (r.transpose() * c.a.transpose() * c.b).trace();
    EXPECT_NEAR(scale, c.scale, 1e-13 * c.scale) << name;
    EXPECT_NEAR(r.determinant(), name == "harman74_k4_reflected" ? -1.0 : 1.0, 1e-12) << name;
  }
}

// Reference: scipy 1.10.1 scipy.linalg.subspace_angles(A, B), which returns the angles
// DESCENDING; ours are ascending, so we compare against the reversed list. Tolerance
// 1e-12 radians: each angle is taken from the sine below 45 degrees and the cosine above
// (both sides), where d(angle) is about eps / |cos| resp. eps / |sin| <= 1.5 eps, plus the
// difference of the orthonormal bases (scipy: SVD; ours: QR), of order eps times the
// condition number of A and B (small for these cases). The exactly rotated case has all
// angles at rounding level (~1e-15).
TEST(ScipyReference, PrincipalAnglesMatchScipy) {
  for (const auto& [name, c] : scipy_cases()) {
    const Eigen::VectorXd ours = fe::principal_angles(c.a, c.b);
    const Eigen::VectorXd scipy_ascending = c.angles_descending.reverse();
    ASSERT_EQ(ours.size(), scipy_ascending.size()) << name;
    const double diff = (ours - scipy_ascending).cwiseAbs().maxCoeff();
    std::printf("  measured %-24s max |angle - scipy| = %.2e rad\n", name.c_str(), diff);
    EXPECT_LT(diff, 1e-12) << name;
    // Symmetric in its arguments.
    EXPECT_LT((fe::principal_angles(c.b, c.a) - ours).cwiseAbs().maxCoeff(), 1e-12) << name;
  }
}

// ---------------------------------------------------------------------------------------
// Planted rotations (invented data): B = A Q for a known orthogonal Q. Since A has full
// column rank, A R = B forces R = Q, so alignment must return Q itself.

Eigen::MatrixXd gaussian(Eigen::Index rows, Eigen::Index cols, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal;
  Eigen::MatrixXd m(rows, cols);
  for (Eigen::Index j = 0; j < cols; ++j)
    for (Eigen::Index i = 0; i < rows; ++i) m(i, j) = normal(rng);
  return m;
}

// An orthogonal k x k matrix with the determinant's sign asked for: Q of the QR of a
// Gaussian matrix, then its first column flipped if needed.
Eigen::MatrixXd random_orthogonal(Eigen::Index k, unsigned seed, double det_sign) {
  Eigen::MatrixXd q = Eigen::HouseholderQR<Eigen::MatrixXd>(gaussian(k, k, seed)).householderQ();
  if (q.determinant() * det_sign < 0) q.col(0) *= -1;
  return q;
}

std::vector<std::string> names(const std::string& prefix, Eigen::Index n) {
  std::vector<std::string> out;
  for (Eigen::Index i = 0; i < n; ++i) out.push_back(prefix + std::to_string(1000 + i));
  return out;
}

fe::AlignmentOptions min_shared(int m) {
  fe::AlignmentOptions o;
  o.min_shared_assets = m;
  return o;
}

struct PlantedCase {
  const char* name;
  Eigen::MatrixXd q;
};

std::vector<PlantedCase> planted_rotations(Eigen::Index k) {
  Eigen::MatrixXd flip = Eigen::MatrixXd::Identity(k, k);
  flip(2, 2) = -1;  // one column's sign flipped: det -1
  Eigen::MatrixXd swap = Eigen::MatrixXd::Zero(k, k);
  for (Eigen::Index j = 0; j < k; ++j) swap(j, j) = 1;
  swap(1, 1) = swap(3, 3) = 0;
  swap(1, 3) = swap(3, 1) = 1;  // columns 1 and 3 exchanged: det -1
  Eigen::MatrixXd swap_flip = swap;
  swap_flip.col(1) *= -1;  // exchanged and one of them flipped: det +1
  return {{"random det +1", random_orthogonal(k, 11, +1)},
          {"random det -1", random_orthogonal(k, 12, -1)},
          {"sign flip", flip},
          {"column swap", swap},
          {"swap and flip", swap_flip}};
}

// Tolerances 1e-12: A (60 x 5, entries ~N(0,1)) is well conditioned, so R = Q up to
// rounding of a 5 x 5 SVD (~1e-15) and A R - B up to rounding of the products.
TEST(PlantedRotation, AlignmentRecoversTheRotationExactly) {
  const Eigen::Index k = 5;
  const Eigen::MatrixXd a = gaussian(60, k, 7);
  for (const auto& c : planted_rotations(k)) {
    const fe::NamedLoadings window{names("A", 60), a};
    const fe::NamedLoadings reference{names("A", 60), a * c.q};
    const fe::Alignment al = fe::align_to_reference(window, reference, min_shared(20));
    ASSERT_EQ(al.status, fe::AlignmentStatus::aligned) << c.name << ": " << al.message;
    EXPECT_EQ(al.shared, 60) << c.name;
    EXPECT_LT((al.rotation - c.q).cwiseAbs().maxCoeff(), 1e-12) << c.name;
    EXPECT_LT((a * al.rotation - reference.loadings).cwiseAbs().maxCoeff(), 1e-12) << c.name;
    EXPECT_NEAR(al.rotation.determinant(), c.q.determinant(), 1e-12) << c.name;
    EXPECT_LT(al.residual, 1e-14) << c.name;
    ASSERT_EQ(al.factor_fit.size(), k);
    EXPECT_LT((al.factor_fit.array() - 1).abs().maxCoeff(), 1e-14) << c.name;
    EXPECT_NE(al.message.find("aligned on 60 shared assets"), std::string::npos) << al.message;
  }
}

// With noise E added, B = A Q + E. Two exact bounds (linear algebra, common practice):
// R = Q is one candidate, so the optimum's ||A R - B|| <= ||E||; and no R can beat the
// least-squares fit of B on A's columns, so ||A R - B|| >= ||(I - P_A) B||.
TEST(PlantedRotation, NoiseGivesASmallPositiveResidualWithinExactBounds) {
  const Eigen::Index k = 5;
  const Eigen::MatrixXd a = gaussian(60, k, 7);
  const Eigen::MatrixXd q = random_orthogonal(k, 11, +1);
  const Eigen::MatrixXd noise = 0.01 * gaussian(60, k, 8);
  const Eigen::MatrixXd b = a * q + noise;
  const fe::Alignment al = fe::align_to_reference({names("A", 60), a}, {names("A", 60), b}, min_shared(20));
  ASSERT_EQ(al.status, fe::AlignmentStatus::aligned);
  const double upper = noise.norm() / b.norm();
  const Eigen::MatrixXd fitted = a * a.colPivHouseholderQr().solve(b);
  const double lower = (b - fitted).norm() / b.norm();
  EXPECT_GT(al.residual, 0);
  EXPECT_LE(al.residual, upper * (1 + 1e-12));
  EXPECT_GE(al.residual, lower * (1 - 1e-12));
  EXPECT_LT(al.residual, 0.02);  // the noise is 1% of the signal
  EXPECT_LT((al.rotation - q).cwiseAbs().maxCoeff(), 0.01);
  EXPECT_GT(al.factor_fit.minCoeff(), 0.999);
}

// Hand-computed: A = [e1 e2] (3 x 2), B = [[0 2] [1 0] [0 0]]. A'B = [[0 2] [1 0]]
// = [[0 1] [1 0]] diag(1, 2), so its polar factor (Schonemann's R) is the swap [[0 1] [1 0]];
// A R = [[0 1] [1 0] [0 0]], A R - B has the single entry -1: residual 1 / ||B|| = 1 / sqrt(5)
// (relative to the reference, not the window: ||A|| = sqrt(2)). Both aligned columns are
// proportional to B's: congruence 1. Tolerance: rounding of a 2 x 2 SVD.
TEST(PlantedRotation, HandComputedResidual) {
  const fe::NamedLoadings window{{"P", "Q", "R"}, (Eigen::MatrixXd(3, 2) << 1, 0, 0, 1, 0, 0).finished()};
  const fe::NamedLoadings reference{{"P", "Q", "R"}, (Eigen::MatrixXd(3, 2) << 0, 2, 1, 0, 0, 0).finished()};
  const fe::Alignment al = fe::align_to_reference(window, reference, min_shared(3));
  ASSERT_EQ(al.status, fe::AlignmentStatus::aligned);
  EXPECT_LT((al.rotation - (Eigen::MatrixXd(2, 2) << 0, 1, 1, 0).finished()).cwiseAbs().maxCoeff(), 1e-15);
  EXPECT_NEAR(al.residual, 1 / std::sqrt(5.0), 1e-15);
  EXPECT_NEAR(al.factor_fit[0], 1, 1e-15);
  EXPECT_NEAR(al.factor_fit[1], 1, 1e-15);
}

// ---------------------------------------------------------------------------------------
// Shared assets

TEST(SharedAssets, OnlySharedRowsAreUsedInTheWindowsOrder) {
  const Eigen::Index k = 4;
  const Eigen::MatrixXd a = gaussian(50, k, 21);
  const Eigen::MatrixXd q = random_orthogonal(k, 22, -1);
  const Eigen::MatrixXd target = a * q;
  const auto window_names = names("S", 50);
  // The reference: window rows 10..39 in reverse order (rows 0..9 and 40..49 are missing
  // from it), plus 8 assets the window does not have, with rows that would wreck the fit.
  fe::NamedLoadings reference;
  for (Eigen::Index i = 39; i >= 10; --i) reference.assets.push_back(window_names[std::size_t(i)]);
  for (int e = 0; e < 8; ++e) reference.assets.push_back("EXTRA" + std::to_string(e));
  reference.loadings.resize(38, k);
  for (Eigen::Index r = 0; r < 30; ++r) reference.loadings.row(r) = target.row(39 - r);
  reference.loadings.bottomRows(8) = 1e3 * gaussian(8, k, 23);

  const fe::NamedLoadings window{window_names, a};
  const fe::SharedRows s = fe::shared_rows(window, reference);
  ASSERT_EQ(s.assets.size(), 30u);
  for (std::size_t r = 0; r < 30; ++r) {
    EXPECT_EQ(s.assets[r], window_names[10 + r]);  // the window's order, not the reference's
    EXPECT_EQ(s.a.row(Eigen::Index(r)), a.row(Eigen::Index(10 + r)));
    EXPECT_EQ(s.b.row(Eigen::Index(r)), target.row(Eigen::Index(10 + r)));
  }

  const fe::Alignment al = fe::align_to_reference(window, reference, min_shared(20));
  ASSERT_EQ(al.status, fe::AlignmentStatus::aligned) << al.message;
  EXPECT_EQ(al.shared, 30);
  EXPECT_LT((al.rotation - q).cwiseAbs().maxCoeff(), 1e-12);  // as in PlantedRotation
  EXPECT_LT(al.residual, 1e-14);
}

// ---------------------------------------------------------------------------------------
// Statuses and options

void expect_left_as_fitted(const fe::Alignment& al, Eigen::Index k) {
  EXPECT_EQ(al.rotation, Eigen::MatrixXd::Identity(k, k));
  EXPECT_TRUE(std::isnan(al.residual));
  EXPECT_EQ(al.factor_fit.size(), 0);
}

TEST(AlignmentStatus, NoReference) {
  const fe::NamedLoadings window{names("A", 30), gaussian(30, 3, 1)};
  const fe::Alignment al = fe::align_to_reference(window, fe::NamedLoadings{{}, Eigen::MatrixXd(0, 3)}, min_shared(20));
  EXPECT_EQ(al.status, fe::AlignmentStatus::no_reference);
  EXPECT_STREQ(fe::to_string(al.status), "no reference");
  EXPECT_EQ(al.message, "no reference to align to (it has no assets): left as fitted");
  EXPECT_EQ(al.shared, 0);
  expect_left_as_fitted(al, 3);
}

TEST(AlignmentStatus, TooFewSharedAssets) {
  const fe::NamedLoadings window{names("A", 30), gaussian(30, 3, 1)};
  const fe::NamedLoadings reference{names("A", 12), gaussian(12, 3, 2)};  // A1000..A1011 shared
  const fe::Alignment al = fe::align_to_reference(window, reference, min_shared(20));
  EXPECT_EQ(al.status, fe::AlignmentStatus::too_few_shared);
  EXPECT_STREQ(fe::to_string(al.status), "too few shared assets");
  EXPECT_EQ(al.message, "12 shared assets, fewer than the minimum 20: left as fitted");
  EXPECT_EQ(al.shared, 12);
  expect_left_as_fitted(al, 3);
}

// Fewer shared rows than factors: a' b has rank < k and the rotation is not determined.
TEST(AlignmentStatus, FewerSharedAssetsThanFactors) {
  const fe::NamedLoadings window{names("A", 30), gaussian(30, 5, 1)};
  const fe::NamedLoadings reference{names("A", 3), gaussian(3, 5, 2)};
  const fe::Alignment al = fe::align_to_reference(window, reference, min_shared(1));
  EXPECT_EQ(al.status, fe::AlignmentStatus::too_few_shared);
  EXPECT_EQ(al.message, "3 shared assets, fewer than the 5 factors a rotation needs to be determined: left as fitted");
  expect_left_as_fitted(al, 5);
  // Exactly k shared rows is enough.
  const fe::NamedLoadings five{names("A", 5), gaussian(5, 5, 3)};
  EXPECT_EQ(fe::align_to_reference(window, five, min_shared(1)).status, fe::AlignmentStatus::aligned);
}

TEST(AlignmentStatus, FactorCountsDiffer) {
  const fe::NamedLoadings window{names("A", 30), gaussian(30, 5, 1)};
  const fe::NamedLoadings reference{names("A", 30), gaussian(30, 4, 2)};
  const fe::Alignment al = fe::align_to_reference(window, reference, min_shared(20));
  EXPECT_EQ(al.status, fe::AlignmentStatus::factors_differ);
  EXPECT_STREQ(fe::to_string(al.status), "factor counts differ");
  EXPECT_EQ(al.message, "the reference has 4 factors and this window 5: left as fitted");
  expect_left_as_fitted(al, 5);
  EXPECT_STREQ(fe::to_string(fe::AlignmentStatus::aligned), "aligned");
}

TEST(AlignmentOptions, MinimumSharedAssetsMustBePositive) {
  std::string error;
  EXPECT_TRUE(min_shared(1).IsValid(&error));
  EXPECT_FALSE(min_shared(0).IsValid(&error));
  EXPECT_NE(error.find("minimum shared assets"), std::string::npos) << error;
  EXPECT_NE(error.find("= 0"), std::string::npos) << error;
  EXPECT_FALSE(min_shared(-3).IsValid(nullptr));
  const fe::NamedLoadings w{names("A", 10), gaussian(10, 2, 1)};
  EXPECT_THROW(fe::align_to_reference(w, w, min_shared(0)), std::invalid_argument);
}

TEST(AlignmentMisuse, MismatchedShapesThrow) {
  EXPECT_THROW(fe::procrustes_rotation(gaussian(10, 3, 1), gaussian(10, 2, 2)), std::invalid_argument);
  EXPECT_THROW(fe::tucker_congruence(gaussian(10, 3, 1), gaussian(9, 3, 2)), std::invalid_argument);
  EXPECT_THROW(fe::principal_angles(gaussian(10, 3, 1), gaussian(9, 3, 2)), std::invalid_argument);
  EXPECT_THROW(fe::shared_rows({names("A", 3), gaussian(4, 2, 1)}, {names("A", 4), gaussian(4, 2, 1)}),
               std::invalid_argument);
}

// ---------------------------------------------------------------------------------------
// Tucker's congruence (Tucker 1951): sum(a b) / sqrt(sum a^2 sum b^2), a cosine.

TEST(TuckerCongruence, KnownValues) {
  Eigen::MatrixXd a(3, 5), b(3, 5);
  a.col(0) << 1, 2, 3;
  b.col(0) << 1, 2, 3;  // identical: 1
  a.col(1) << 1, 2, 3;
  b.col(1) << 2.5, 5, 7.5;  // proportional: 1 (a cosine ignores length)
  a.col(2) << 1, 2, 3;
  b.col(2) << -1, -2, -3;  // opposite: -1
  a.col(3) << 1, 0, 1;
  b.col(3) << 0, 5, 0;  // orthogonal: 0
  a.col(4) << 1, 2, 3;
  b.col(4) << 4, 5, 6;
  const Eigen::VectorXd phi = fe::tucker_congruence(a, b);
  // Tolerances: a few ulps of a dot product of three terms.
  EXPECT_NEAR(phi[0], 1, 1e-15);
  EXPECT_NEAR(phi[1], 1, 1e-15);
  EXPECT_NEAR(phi[2], -1, 1e-15);
  EXPECT_EQ(phi[3], 0);
  // Hand-computed from Tucker's formula: sum ab = 4 + 10 + 18 = 32, sum a^2 = 14,
  // sum b^2 = 77, so 32 / sqrt(1078) = 0.97463184619707...
  EXPECT_NEAR(phi[4], 0.9746318461970762, 1e-15);
}

TEST(TuckerCongruence, ZeroColumnGivesNaN) {
  Eigen::MatrixXd a(3, 2), b(3, 2);
  a << 1, 0, 2, 0, 3, 0;
  b << 1, 1, 2, 1, 3, 1;
  const Eigen::VectorXd phi = fe::tucker_congruence(a, b);
  EXPECT_NEAR(phi[0], 1, 1e-15);
  EXPECT_TRUE(std::isnan(phi[1]));
  EXPECT_TRUE(std::isnan(fe::tucker_congruence(b, a)[1]));
}

// ---------------------------------------------------------------------------------------
// Principal angles: definitions (Bjorck and Golub 1973) on constructed subspaces.

Eigen::MatrixXd unit_columns(Eigen::Index rows, std::initializer_list<Eigen::Index> which) {
  Eigen::MatrixXd m = Eigen::MatrixXd::Zero(rows, Eigen::Index(which.size()));
  Eigen::Index j = 0;
  for (const Eigen::Index i : which) m(i, j++) = 1;
  return m;
}

// A subspace with itself, and with any other basis of itself (A M for invertible M):
// all angles 0. The sine formula gives them at rounding level; 1e-14 rad.
TEST(PrincipalAngles, SameSubspaceGivesZeroWhateverTheBasis) {
  const Eigen::MatrixXd a = gaussian(40, 4, 31);
  const Eigen::MatrixXd m = gaussian(4, 4, 32);  // invertible with probability 1
  EXPECT_LT(fe::principal_angles(a, a).cwiseAbs().maxCoeff(), 1e-14);
  EXPECT_LT(fe::principal_angles(a, a * m).cwiseAbs().maxCoeff(), 1e-14);
  EXPECT_LT(fe::principal_angles(a, a * random_orthogonal(4, 33, -1)).cwiseAbs().maxCoeff(), 1e-14);
}

// Angles depend on the subspaces only: changing either basis changes nothing (1e-12,
// the bases' rounding times their modest condition numbers).
TEST(PrincipalAngles, InvariantToTheBasesChosen) {
  const Eigen::MatrixXd a = gaussian(40, 4, 34), b = gaussian(40, 4, 35);
  const Eigen::VectorXd angles = fe::principal_angles(a, b);
  const Eigen::VectorXd again = fe::principal_angles(a * gaussian(4, 4, 36), b * random_orthogonal(4, 37, +1));
  EXPECT_LT((angles - again).cwiseAbs().maxCoeff(), 1e-12);
  for (Eigen::Index i = 1; i < angles.size(); ++i) EXPECT_LE(angles[i - 1], angles[i]);  // ascending
}

TEST(PrincipalAngles, OrthogonalSubspacesAreAtNinetyDegrees) {
  const Eigen::VectorXd angles = fe::principal_angles(unit_columns(6, {0, 1}), unit_columns(6, {2, 3}));
  ASSERT_EQ(angles.size(), 2);
  EXPECT_NEAR(angles[0], kPi / 2, 1e-15);
  EXPECT_NEAR(angles[1], kPi / 2, 1e-15);
}

// span{e1} and span{cos t e1 + sin t e2} meet at angle t by definition. For t = 1e-10
// the cosine is 1 to double precision (acos would return 0 or ~1.5e-8); the sine formula
// must give t to a relative 1e-12.
TEST(PrincipalAngles, TinyAnglesAreAccurate) {
  for (const double t : {1e-10, 1e-6, 0.3, 1.2}) {
    Eigen::MatrixXd a = unit_columns(5, {0}), b = Eigen::MatrixXd::Zero(5, 1);
    b(0, 0) = std::cos(t);
    b(1, 0) = std::sin(t);
    EXPECT_NEAR(fe::principal_angles(a, b)[0], t, 1e-12 * t) << t;
  }
}

TEST(PrincipalAngles, DifferentColumnCountsGiveTheSmallerCount) {
  // span{e1, e2, e3} and span{e1, e4}: e1 is shared (0), e4 is orthogonal (90 degrees).
  const Eigen::VectorXd angles = fe::principal_angles(unit_columns(6, {0, 1, 2}), unit_columns(6, {0, 3}));
  ASSERT_EQ(angles.size(), 2);
  EXPECT_NEAR(angles[0], 0, 1e-15);
  EXPECT_NEAR(angles[1], kPi / 2, 1e-15);
  EXPECT_LT((fe::principal_angles(unit_columns(6, {0, 3}), unit_columns(6, {0, 1, 2})) - angles).norm(), 1e-15);
}

// A rank-deficient input spans fewer dimensions: the angles it cannot have are NaN.
TEST(PrincipalAngles, RankDeficientInputGivesNaNForTheMissingAngles) {
  Eigen::MatrixXd a = unit_columns(6, {0, 0});  // two copies of e1: rank 1
  const Eigen::VectorXd angles = fe::principal_angles(a, unit_columns(6, {0, 1}));
  ASSERT_EQ(angles.size(), 2);
  EXPECT_NEAR(angles[0], 0, 1e-15);
  EXPECT_TRUE(std::isnan(angles[1]));
}

// ---------------------------------------------------------------------------------------
// SmoothedReference: S_i <- lambda S_i + row_i, W_i <- lambda W_i + 1 (absent assets only
// decay), lambda = 2^(-1 / half_life); reference row = S_i / W_i (the header's definition).

fe::NamedLoadings rows_of(std::vector<std::string> assets, std::vector<std::vector<double>> rows) {
  fe::NamedLoadings l;
  l.assets = std::move(assets);
  l.loadings.resize(Eigen::Index(rows.size()), rows.empty() ? 0 : Eigen::Index(rows[0].size()));
  for (std::size_t i = 0; i < rows.size(); ++i)
    for (std::size_t j = 0; j < rows[i].size(); ++j) l.loadings(Eigen::Index(i), Eigen::Index(j)) = rows[i][j];
  return l;
}

TEST(SmoothedReference, FirstWindowIsTheReference) {
  fe::SmoothedReference s(4);
  EXPECT_TRUE(s.empty());
  const fe::NamedLoadings w{names("A", 20), gaussian(20, 3, 41)};
  s.add(w);
  EXPECT_FALSE(s.empty());
  const fe::NamedLoadings r = s.reference();
  EXPECT_EQ(r.assets, w.assets);
  EXPECT_EQ(r.loadings, w.loadings);  // S = row, W = 1: exact
}

// Half-life 2 windows: lambda = 2^(-1/2) = 0.70710678... Hand-computed from the update:
// X is in both windows, 1 then 3: (lambda * 1 + 3) / (lambda + 1) = 2.17157287525381;
// Y only in the first keeps its value (lambda y / lambda); Z only in the second is its row.
TEST(SmoothedReference, SecondWindowWeighsLambdaToOne) {
  fe::SmoothedReference s(2);
  s.add(rows_of({"X", "Y"}, {{1, -2}, {5, 6}}));
  s.add(rows_of({"Z", "X"}, {{7, 8}, {3, 2}}));
  const fe::NamedLoadings r = s.reference();
  ASSERT_EQ(r.assets, (std::vector<std::string>{"X", "Y", "Z"}));  // first-seen order
  const double lambda = std::sqrt(0.5);
  EXPECT_NEAR(r.loadings(0, 0), 2.17157287525381, 1e-14);
  EXPECT_NEAR(r.loadings(0, 0), (lambda * 1 + 3) / (lambda + 1), 1e-15);
  EXPECT_NEAR(r.loadings(0, 1), (lambda * -2 + 2) / (lambda + 1), 1e-15);
  EXPECT_NEAR(r.loadings(1, 0), 5, 1e-15);
  EXPECT_NEAR(r.loadings(1, 1), 6, 1e-15);
  EXPECT_EQ(r.loadings(2, 0), 7);
  EXPECT_EQ(r.loadings(2, 1), 8);
}

// Half-life 1 (lambda = 1/2), minimum share 0.05. X is in every window, Y only in the
// first. After m windows W_X = 2 (1 - 2^-m) and W_Y = 2^-(m-1), so W_Y / W_X is
// 1, 1/3, 1/7, 1/15 = 0.067, 1/31 = 0.032: Y is kept through window 4 and dropped at 5.
TEST(SmoothedReference, AbsentAssetsDecayAndDropOut) {
  fe::SmoothedReference s(1, 0.05);
  s.add(rows_of({"X", "Y"}, {{1.0}, {9.0}}));
  for (int m = 2; m <= 6; ++m) {
    s.add(rows_of({"X"}, {{1.0 + m}}));
    const fe::NamedLoadings r = s.reference();
    if (m <= 4) {
      ASSERT_EQ(r.assets, (std::vector<std::string>{"X", "Y"})) << m;
      EXPECT_NEAR(r.loadings(1, 0), 9.0, 1e-14) << m;  // decay changes its weight, not its value
    } else {
      EXPECT_EQ(r.assets, std::vector<std::string>{"X"}) << m;
    }
  }
  // Y comes back: its old sum and weight are still there, now with weight 2^-6 + 1.
  s.add(rows_of({"X", "Y"}, {{8.0}, {1.0}}));
  const fe::NamedLoadings r = s.reference();
  ASSERT_EQ(r.assets.size(), 2u);
  const double w_old = std::pow(0.5, 6);
  EXPECT_NEAR(r.loadings(1, 0), (w_old * 9 + 1) / (w_old + 1), 1e-14);
}

TEST(SmoothedReference, MisuseThrowsAndLeavesTheStateAlone) {
  EXPECT_THROW(fe::SmoothedReference(0), std::invalid_argument);
  EXPECT_THROW(fe::SmoothedReference(-2), std::invalid_argument);
  EXPECT_THROW(fe::SmoothedReference(std::nan("")), std::invalid_argument);
  EXPECT_THROW(fe::SmoothedReference(2, 1.5), std::invalid_argument);
  fe::SmoothedReference s(3);
  s.add(rows_of({"X", "Y"}, {{1, 2}, {3, 4}}));
  const fe::NamedLoadings before = s.reference();
  EXPECT_THROW(s.add(rows_of({"X"}, {{1, 2, 3}})), std::invalid_argument);  // 3 factors after 2
  EXPECT_THROW(s.add(rows_of({"X", "X"}, {{1, 2}, {3, 4}})), std::invalid_argument);  // X twice
  const fe::NamedLoadings after = s.reference();
  EXPECT_EQ(after.assets, before.assets);
  EXPECT_EQ(after.loadings, before.loadings);
}

// ---------------------------------------------------------------------------------------
// The refresh's promise: aligning a window by R (L <- L R) and rotating its factor
// covariance with it (Phi <- R' Phi R) leaves every portfolio's factor variance
// w' L Phi L' w unchanged, because R R' = I (algebra). Relative 1e-12: a few products of
// well-scaled 50 x 4 and 4 x 4 matrices, rounding ~1e-15.
TEST(AlignmentInvariance, PortfolioFactorRiskIsUnchanged) {
  const Eigen::Index n = 50, k = 4;
  const Eigen::MatrixXd l = 0.01 * gaussian(n, k, 51);
  const Eigen::MatrixXd g = gaussian(k, k, 52);
  const Eigen::MatrixXd phi = g * g.transpose() + Eigen::MatrixXd::Identity(k, k);
  // A reference that is a rotated, noisy copy, so R is far from the identity.
  const Eigen::MatrixXd reference = l * random_orthogonal(k, 53, -1) + 0.002 * gaussian(n, k, 54);
  const fe::Alignment al = fe::align_to_reference({names("A", n), l}, {names("A", n), reference}, min_shared(20));
  ASSERT_EQ(al.status, fe::AlignmentStatus::aligned);
  ASSERT_GT((al.rotation - Eigen::MatrixXd::Identity(k, k)).norm(), 0.5);
  const Eigen::MatrixXd l_aligned = l * al.rotation;
  const Eigen::MatrixXd phi_aligned = al.rotation.transpose() * phi * al.rotation;
  for (unsigned seed = 60; seed < 70; ++seed) {
    const Eigen::VectorXd w = gaussian(n, 1, seed).col(0);
    const Eigen::VectorXd x = l.transpose() * w, y = l_aligned.transpose() * w;
    const double before = x.dot(phi * x), after = y.dot(phi_aligned * y);
    EXPECT_NEAR(after, before, 1e-12 * before) << seed;
  }
}

}  // namespace
