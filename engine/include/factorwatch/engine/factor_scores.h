// Factor returns (factor scores) and residual (specific) returns of a returns panel under a
// fitted model  x - mu = L f + e,  Cov(f) = Phi,  Cov(e) = Psi (diagonal).
//
// Two estimators of f on each date, from the centred returns z = x - mu:
//   Bartlett (1937), weighted least squares:  f = (L' Psi^-1 L)^-1 L' Psi^-1 z.
//     Conditionally unbiased (E[f^ | f] = f); error covariance (L' Psi^-1 L)^-1.
//   Regression (Thomson 1951):  f = Phi L' Sigma^-1 z = (Phi^-1 + L' Psi^-1 L)^-1 L' Psi^-1 z
//     (Woodbury; Sigma = L Phi L' + Psi is never formed). Shrunk towards 0; smallest mean
//     squared error, (Phi^-1 + L' Psi^-1 L)^-1 (with Phi = I: (I + L' Psi^-1 L)^-1).
// Both follow the factor basis: for L T (and Phi -> T^-1 Phi T^-T) the scores become T^-1 f,
// and the residuals do not change.
//
// A date with gaps uses the modelled assets observed on it. Misuse (an inconsistent fit,
// residuals asked for an asset the fit does not hold) throws std::invalid_argument; a date
// that cannot be scored is a NaN row, listed with the reason.
#pragma once

#include <Eigen/Dense>
#include <optional>
#include <string>
#include <vector>

#include "factorwatch/engine/fit.h"
#include "factorwatch/engine/panel.h"

namespace factorwatch::engine {

enum class ScoreMethod { bartlett, regression };

const char* to_string(ScoreMethod m);  // "bartlett", "regression"
std::optional<ScoreMethod> parse_score_method(const std::string& s);

struct UnscoredDate {
  Eigen::Index row = 0;  // into FactorScores::dates
  std::string reason;    // in words, e.g. "2 modelled assets observed, fewer than k + 1 = 4"
};

struct FactorScores {
  ScoreMethod method = ScoreMethod::bartlett;
  std::vector<Date> dates;         // the panel's dates, in its order
  Eigen::MatrixXd scores;          // T x k, in the fit's factor basis; NaN rows for unscored dates
  // Per date: the modelled assets (fit assets among the panel's columns) with a return.
  std::vector<Eigen::Index> assets_used;
  Eigen::Index modelled_assets = 0;  // fit assets found among the panel's columns
  std::vector<UnscoredDate> unscored;
};

// Scores of every date of `panel`. Columns are matched to fit.assets by name; panel columns
// the fit lacks are ignored, fit assets the panel lacks count as missing on every date. A
// gap is a NaN (any non-finite value counts as one). A date is unscored (NaN row) when
// fewer than k + 1 modelled assets are observed on it, or, for Bartlett, when the loadings
// of the observed assets do not determine the factors (L' Psi^-1 L numerically singular).
// fit.factor_covariance empty means the identity. Throws std::invalid_argument when the
// fit's sizes disagree, it has no factors, or a mean, loading, specific variance (must be
// > 0) or factor covariance entry is not finite.
FactorScores factor_scores(const ReturnsPanel& panel, const FactorFit& fit, ScoreMethod method);

struct ResidualReturns {
  std::vector<Date> dates;          // the panel's
  std::vector<std::string> assets;  // as asked
  Eigen::MatrixXd residuals;        // T x assets.size(); NaN where the asset has no return or the date is unscored
};

// e = z - L f for each asset asked for, with the scores `scores` computed from the same
// panel and fit (either method). Throws std::invalid_argument for an asset the fit does not
// hold or scores of another panel (different dates). An asset the panel lacks gets NaN.
ResidualReturns residual_returns(const ReturnsPanel& panel, const FactorFit& fit, const FactorScores& scores,
                                 const std::vector<std::string>& assets);

}  // namespace factorwatch::engine
