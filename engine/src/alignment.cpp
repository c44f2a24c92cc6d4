#include "factorwatch/engine/alignment.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>
#include <stdexcept>

namespace factorwatch::engine {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

void require_same_rows(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b, const char* what) {
  if (a.rows() != b.rows()) {
    std::ostringstream os;
    os << what << ": the matrices have " << a.rows() << " and " << b.rows() << " rows; they must have the same";
    throw std::invalid_argument(os.str());
  }
}

void require_same_shape(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b, const char* what) {
  require_same_rows(a, b, what);
  if (a.cols() != b.cols()) {
    std::ostringstream os;
    os << what << ": the matrices have " << a.cols() << " and " << b.cols() << " columns; they must have the same";
    throw std::invalid_argument(os.str());
  }
}

void require_row_names(const NamedLoadings& l, const char* what) {
  if (l.loadings.rows() != Eigen::Index(l.assets.size())) {
    std::ostringstream os;
    os << what << ": " << l.assets.size() << " asset names for " << l.loadings.rows() << " loading rows";
    throw std::invalid_argument(os.str());
  }
}

// An orthonormal basis of the column space: the first rank columns of the Q of a
// column-pivoted Householder QR (the pivoting reveals the rank, so a dependent column
// does not smuggle an arbitrary direction into the basis).
Eigen::MatrixXd orthonormal_basis(const Eigen::MatrixXd& m) {
  const Eigen::ColPivHouseholderQR<Eigen::MatrixXd> qr(m);
  const Eigen::Index rank = qr.rank();
  return qr.householderQ() * Eigen::MatrixXd::Identity(m.rows(), rank);
}

}  // namespace

Eigen::MatrixXd procrustes_rotation(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b) {
  require_same_shape(a, b, "procrustes_rotation");
  if (a.cols() == 0) return Eigen::MatrixXd(0, 0);
  // a' b is only k x k: one-sided Jacobi is the accurate choice at this size and costs
  // nothing next to the product itself.
  const Eigen::JacobiSVD<Eigen::MatrixXd> svd(a.transpose() * b, Eigen::ComputeFullU | Eigen::ComputeFullV);
  // No determinant correction: a reflection is exactly what undoes a flipped column.
  return svd.matrixU() * svd.matrixV().transpose();
}

Eigen::VectorXd tucker_congruence(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b) {
  require_same_shape(a, b, "tucker_congruence");
  Eigen::VectorXd phi(a.cols());
  for (Eigen::Index j = 0; j < a.cols(); ++j) {
    // norm() rather than sqrt(squaredNorm()): it scales, so tiny loadings cannot underflow.
    const double na = a.col(j).norm(), nb = b.col(j).norm();
    phi[j] = (na == 0 || nb == 0) ? kNaN : a.col(j).dot(b.col(j)) / (na * nb);
  }
  return phi;
}

Eigen::VectorXd principal_angles(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b) {
  require_same_rows(a, b, "principal_angles");
  const Eigen::Index count = std::min(a.cols(), b.cols());
  Eigen::VectorXd angles = Eigen::VectorXd::Constant(count, kNaN);
  if (count == 0 || a.rows() == 0) return angles;

  Eigen::MatrixXd qa = orthonormal_basis(a), qb = orthonormal_basis(b);
  // The angles are symmetric in a and b; take qb as the narrower basis so that the sine
  // matrix qb - qa qa' qb has exactly one column per angle.
  if (qa.cols() < qb.cols()) std::swap(qa, qb);
  const Eigen::Index found = qb.cols();  // min of the two ranks
  if (found == 0) return angles;

  const Eigen::MatrixXd c = qa.transpose() * qb;
  const Eigen::VectorXd cosines = Eigen::JacobiSVD<Eigen::MatrixXd>(c).singularValues();  // descending
  const Eigen::VectorXd sines =
      Eigen::JacobiSVD<Eigen::MatrixXd>(qb - qa * c).singularValues().reverse();  // ascending
  // cos is flat near 0 and sin near 90 degrees: a cosine of 1 - 1e-16 cannot tell an angle
  // of 1e-8 from 0. Below 45 degrees (cos^2 >= 1/2) the sine gives the angle; above, the cosine.
  for (Eigen::Index i = 0; i < found; ++i) {
    const double cosine = std::min(1.0, cosines[i]);
    angles[i] = cosine * cosine >= 0.5 ? std::asin(std::min(1.0, sines[i])) : std::acos(std::max(0.0, cosine));
  }
  // Rounding may leave neighbours a few ulps out of order where the formula switches.
  std::sort(angles.data(), angles.data() + found);
  return angles;
}

SharedRows shared_rows(const NamedLoadings& a, const NamedLoadings& b) {
  require_row_names(a, "shared_rows (first)");
  require_row_names(b, "shared_rows (second)");
  // Consecutive windows mostly hold the same assets in the same order: no lookup needed.
  if (a.assets == b.assets) return {a.assets, a.loadings, b.loadings};
  std::unordered_map<std::string, Eigen::Index> in_b;
  in_b.reserve(b.assets.size());
  for (std::size_t i = 0; i < b.assets.size(); ++i) in_b.emplace(b.assets[i], Eigen::Index(i));  // first wins

  std::vector<Eigen::Index> rows_a, rows_b;
  for (std::size_t i = 0; i < a.assets.size(); ++i) {
    const auto it = in_b.find(a.assets[i]);
    if (it == in_b.end()) continue;
    rows_a.push_back(Eigen::Index(i));
    rows_b.push_back(it->second);
  }
  SharedRows s;
  const Eigen::Index n = Eigen::Index(rows_a.size());
  s.a.resize(n, a.loadings.cols());
  s.b.resize(n, b.loadings.cols());
  s.assets.reserve(rows_a.size());
  for (Eigen::Index r = 0; r < n; ++r) {
    s.assets.push_back(a.assets[std::size_t(rows_a[std::size_t(r)])]);
    s.a.row(r) = a.loadings.row(rows_a[std::size_t(r)]);
    s.b.row(r) = b.loadings.row(rows_b[std::size_t(r)]);
  }
  return s;
}

Alignment align_to_reference(const NamedLoadings& window, const NamedLoadings& reference,
                             const AlignmentOptions& options) {
  std::string error;
  if (!options.IsValid(&error)) throw std::invalid_argument(error);
  require_row_names(window, "align_to_reference (window)");
  require_row_names(reference, "align_to_reference (reference)");

  const Eigen::Index k = window.loadings.cols();
  Alignment out;
  out.rotation = Eigen::MatrixXd::Identity(k, k);
  out.residual = kNaN;
  std::ostringstream message;

  if (reference.assets.empty()) {
    out.status = AlignmentStatus::no_reference;
    out.message = "no reference to align to (it has no assets): left as fitted";
    return out;
  }
  if (reference.loadings.cols() != k) {
    out.status = AlignmentStatus::factors_differ;
    message << "the reference has " << reference.loadings.cols() << " factors and this window " << k
            << ": left as fitted";
    out.message = message.str();
    return out;
  }
  const SharedRows s = shared_rows(window, reference);
  out.shared = Eigen::Index(s.assets.size());
  if (out.shared < options.min_shared_assets) {
    out.status = AlignmentStatus::too_few_shared;
    message << out.shared << " shared assets, fewer than the minimum " << options.min_shared_assets
            << ": left as fitted";
    out.message = message.str();
    return out;
  }
  // With fewer rows than factors a' b has rank < k and U V' is not unique: the rotation
  // would be partly arbitrary, so it is not applied.
  if (out.shared < k) {
    out.status = AlignmentStatus::too_few_shared;
    message << out.shared << " shared assets, fewer than the " << k
            << " factors a rotation needs to be determined: left as fitted";
    out.message = message.str();
    return out;
  }

  out.status = AlignmentStatus::aligned;
  out.rotation = procrustes_rotation(s.a, s.b);
  const Eigen::MatrixXd rotated = s.a * out.rotation;
  const double target = s.b.norm();
  out.residual = target > 0 ? (rotated - s.b).norm() / target : kNaN;
  out.factor_fit = tucker_congruence(rotated, s.b);
  message << "aligned on " << out.shared << " shared assets: relative residual " << out.residual;
  if (k > 0) message << ", lowest factor congruence " << out.factor_fit.minCoeff();
  out.message = message.str();
  return out;
}

SmoothedReference::SmoothedReference(double half_life_windows, double min_weight_share)
    : lambda_(0), min_weight_share_(min_weight_share) {
  if (!(half_life_windows > 0) || !std::isfinite(half_life_windows))
    throw std::invalid_argument("SmoothedReference: half-life " + std::to_string(half_life_windows) +
                                " windows must be a positive number");
  if (!(min_weight_share >= 0 && min_weight_share <= 1))
    throw std::invalid_argument("SmoothedReference: minimum weight share " + std::to_string(min_weight_share) +
                                " must be in [0, 1]");
  lambda_ = std::exp2(-1.0 / half_life_windows);
}

void SmoothedReference::add(const NamedLoadings& aligned) {
  require_row_names(aligned, "SmoothedReference::add");
  if (windows_ > 0 && aligned.loadings.cols() != factors_)
    throw std::invalid_argument("SmoothedReference::add: a window with " + std::to_string(aligned.loadings.cols()) +
                                " factors after windows with " + std::to_string(factors_));
  // Check the names before changing anything, so a rejected window leaves no trace.
  {
    std::unordered_map<std::string, int> seen;
    seen.reserve(aligned.assets.size());
    for (const auto& name : aligned.assets)
      if (++seen[name] > 1) throw std::invalid_argument("SmoothedReference::add: asset " + name + " appears twice");
  }
  factors_ = aligned.loadings.cols();

  for (auto& s : sums_) s *= lambda_;
  for (auto& w : weights_) w *= lambda_;
  for (std::size_t r = 0; r < aligned.assets.size(); ++r) {
    const auto [it, inserted] = index_.emplace(aligned.assets[r], assets_.size());
    if (inserted) {
      assets_.push_back(aligned.assets[r]);
      sums_.push_back(Eigen::VectorXd::Zero(factors_));
      weights_.push_back(0);
    }
    sums_[it->second] += aligned.loadings.row(Eigen::Index(r)).transpose();
    weights_[it->second] += 1;
  }
  ++windows_;
}

NamedLoadings SmoothedReference::reference() const {
  NamedLoadings out;
  const double largest = weights_.empty() ? 0 : *std::max_element(weights_.begin(), weights_.end());
  std::vector<std::size_t> kept;
  for (std::size_t i = 0; i < assets_.size(); ++i)
    // weight > 0 as well: with a share of 0 an asset whose weight underflowed would be 0/0.
    if (weights_[i] > 0 && weights_[i] >= min_weight_share_ * largest) kept.push_back(i);
  out.loadings.resize(Eigen::Index(kept.size()), factors_);
  for (std::size_t r = 0; r < kept.size(); ++r) {
    out.assets.push_back(assets_[kept[r]]);
    out.loadings.row(Eigen::Index(r)) = (sums_[kept[r]] / weights_[kept[r]]).transpose();
  }
  return out;
}

}  // namespace factorwatch::engine
