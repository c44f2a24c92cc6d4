// Aligning one window's factors onto a reference window's, and the measures that compare
// two sets of loadings.
//
// Loadings come back from every fit with arbitrary column signs, order and (near ties of
// factor variances) rotation; two windows are comparable only after the new one is
// rotated onto the reference. Alignment uses orthogonal Procrustes (Schonemann 1966) on
// the assets the two windows share, reflections allowed: undoing sign flips and column
// swaps is the point. Pure functions, no I/O.
#pragma once

#include <Eigen/Dense>
#include <string>
#include <unordered_map>
#include <vector>

namespace factorwatch::engine {

// The orthogonal R (k x k, det +1 or -1) minimising ||a R - b||_F for a, b of the same
// shape (rows x k): R = U V' where U S V' is the SVD of a' b (Schonemann 1966).
// Throws std::invalid_argument when the shapes differ.
Eigen::MatrixXd procrustes_rotation(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b);

// Tucker's (1951) congruence coefficient of each column pair, sum(a b) / sqrt(sum a^2 sum b^2):
// a cosine, 1 for proportional columns. NaN for a column that is all zeros.
Eigen::VectorXd tucker_congruence(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b);

// Principal angles between the column spaces of a and b (same rows), in radians, ascending
// (Bjorck and Golub 1973: orthonormal bases by QR, angles = acos of the singular values of
// Qa' Qb, clamped to [0, 1]; the small angles from asin of the singular values of
// Qb - Qa Qa' Qb for accuracy below about 1e-8). min(cols a, cols b) angles; when a or b
// is rank-deficient its span has fewer dimensions and the angles it cannot have are NaN
// (at the end).
Eigen::VectorXd principal_angles(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b);

// One window's loadings with their row names (assets), any scale.
struct NamedLoadings {
  std::vector<std::string> assets;
  Eigen::MatrixXd loadings;  // assets.size() x k
};

// The rows of a and b for the assets both have, in a's order.
struct SharedRows {
  std::vector<std::string> assets;
  Eigen::MatrixXd a, b;
};
SharedRows shared_rows(const NamedLoadings& a, const NamedLoadings& b);

enum class AlignmentStatus {
  aligned,         // rotated onto the reference
  no_reference,    // nothing to align to (the first window, or the reference itself)
  too_few_shared,  // fewer shared assets than the minimum: left as fitted
  factors_differ,  // the reference has a different number of factors: left as fitted
};
const char* to_string(AlignmentStatus s);  // "aligned", "no reference", "too few shared assets", "factor counts differ"

struct AlignmentOptions {
  // Fewer shared assets than this and the window is left as fitted, with a status.
  int min_shared_assets = 20;
  bool IsValid(std::string* error) const;
};

struct Alignment {
  AlignmentStatus status = AlignmentStatus::no_reference;
  std::string message;      // in words, e.g. "12 shared assets, fewer than the minimum 20"
  Eigen::Index shared = 0;  // assets both windows have
  // R (k x k, orthogonal): aligned loadings = window loadings * R. Identity unless aligned.
  Eigen::MatrixXd rotation;
  // ||A R - B||_F / ||B||_F over the shared rows (0 = perfect fit); NaN unless aligned.
  double residual = 0;
  // Tucker congruence of each aligned column with the reference's, on the shared rows;
  // empty unless aligned.
  Eigen::VectorXd factor_fit;
};

// Aligns `window` onto `reference` (both on the same scale; the caller standardizes).
Alignment align_to_reference(const NamedLoadings& window, const NamedLoadings& reference,
                             const AlignmentOptions& options);

// An exponentially weighted average of past aligned loadings, asset by asset: after each
// window, S_i <- lambda S_i + row_i and W_i <- lambda W_i + 1 for the assets it has (absent
// assets only decay), lambda = 2^(-1 / half_life). The reference row of asset i is S_i / W_i,
// for assets whose weight is at least `min_weight_share` of the largest weight (assets
// gone for many half-lives drop out). Misuse throws std::invalid_argument: a half-life that
// is not positive, a min_weight_share outside [0, 1], a window whose factor count differs
// from the first window's, or an asset twice in one window (a rejected window changes nothing).
class SmoothedReference {
 public:
  explicit SmoothedReference(double half_life_windows, double min_weight_share = 0.05);
  void add(const NamedLoadings& aligned);
  bool empty() const { return windows_ == 0; }
  NamedLoadings reference() const;  // assets in first-seen order

 private:
  double lambda_;
  double min_weight_share_;
  long windows_ = 0;
  Eigen::Index factors_ = 0;
  std::vector<std::string> assets_;  // first-seen order
  std::unordered_map<std::string, std::size_t> index_;
  std::vector<Eigen::VectorXd> sums_;
  std::vector<double> weights_;
};

}  // namespace factorwatch::engine
