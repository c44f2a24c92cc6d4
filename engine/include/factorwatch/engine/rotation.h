// Rotating factor loadings: varimax (orthogonal) and promax (oblique).
//
// Loadings are unique only up to rotation: L T with Phi' = T^-1 Phi T^-T gives the same
// model L Phi L'. A rotation picks the T that makes the loadings easiest to read (each
// asset loading on few factors). Pure functions; misuse (bad options) throws
// std::invalid_argument with the message from RotationOptions::IsValid.
#pragma once

#include <Eigen/Dense>
#include <optional>
#include <string>

namespace factorwatch::engine {

enum class RotationMethod { none, varimax, promax };

struct RotationOptions {
  RotationMethod method = RotationMethod::none;
  // Kaiser (1958) normalisation: each row is scaled to unit length before rotating and
  // scaled back after, so assets with a large communality do not dominate the criterion.
  bool kaiser_normalize = true;
  // Varimax stops when the criterion (sum of the SVD's singular values) grows by less
  // than this relative amount: the stopping rule of R's stats::varimax (its eps, 1e-5).
  double tolerance = 1e-5;
  int max_iterations = 1000;
  // Promax (Hendrickson and White 1964): the power the varimax loadings are raised to
  // for the target (R's stats::promax m, default 4); > 1.
  double promax_power = 4;

  // True when usable; otherwise *error names the field, its value and the rule.
  bool IsValid(std::string* error) const;
};

struct RotationResult {
  // The rotation applied: the one asked for, except promax where R's stats::promax stops
  // with an error: loadings of deficient column rank (fewer assets than factors, a zero
  // or dependent column) or a factor with negligible loadings (U'U singular). Then the
  // varimax result, marked varimax.
  RotationMethod method = RotationMethod::none;
  // T (k x k): rotated loadings = L T. Orthogonal for varimax (and none: identity).
  Eigen::MatrixXd matrix;
  // L T: the rotated loadings; for promax, the pattern matrix.
  Eigen::MatrixXd loadings;
  // Correlation of the rotated factors, (T' T)^-1 when the input factors are orthogonal;
  // identity for varimax and none.
  Eigen::MatrixXd factor_correlation;
  // loadings * factor_correlation: the structure matrix (covariances of assets with the
  // rotated factors; correlations when the input loadings are standardized).
  Eigen::MatrixXd structure;
  int iterations = 0;     // varimax sweeps (0 for none)
  bool converged = true;  // false when max_iterations ended varimax first
};

// Rotates L (N x k) with the criterion and stopping rule of R's stats::varimax and
// stats::promax: no reordering of columns and no sign changes, so results compare with
// R's column for column. k = 1, and method none, return the identity (k = 0: 0 x 0).
// With Kaiser normalisation a zero row (R: NaN everywhere) stays zero and does not
// affect the rotation except through the row count in the criterion.
RotationResult rotate_loadings(const Eigen::MatrixXd& loadings, const RotationOptions& options);

// A fitted window's rotation, computed on its standardized loadings (correlation scale,
// the usual practice; with Kaiser normalisation the scale of each row does not matter)
// and then put in the engine's canonical form: columns ordered by variance explained
// (column sum of squared loadings times the factor's variance, largest first) and each
// column's sum made positive. That signed permutation is folded into matrix, loadings,
// factor_correlation and structure, so loadings = standardized_loadings * matrix still holds.
RotationResult rotate_fit_loadings(const Eigen::MatrixXd& standardized_loadings, const RotationOptions& options);

// Applies a change of factor basis T (k x k, invertible) to a model: loadings <- L T and
// factor_covariance <- T^-1 Phi T^-T, so L Phi L' (and every risk number) is unchanged.
void apply_factor_transform(const Eigen::MatrixXd& transform, Eigen::MatrixXd& loadings,
                            Eigen::MatrixXd& factor_covariance);

const char* to_string(RotationMethod m);  // "none", "varimax", "promax"
std::optional<RotationMethod> parse_rotation(const std::string& s);

}  // namespace factorwatch::engine
