// Fitting the orthogonal factor model  x - mu = L f + e,  Sigma = L L' + Psi.
//
// One call per job: fit(input, options) -> FactorFit. Misuse (invalid options)
// throws std::invalid_argument with the message from FitOptions::IsValid; data
// problems (excluded assets, Heywood cases, non-convergence) are values in the result.
#pragma once

#include <Eigen/Dense>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "factorwatch/engine/failure.h"
#include "factorwatch/engine/panel.h"
#include "factorwatch/engine/window_products.h"

namespace factorwatch::engine {

enum class Method { pca, principal_axis, max_likelihood };
enum class Basis { covariance, correlation };
enum class Weighting { equal, ewma };
// Which eigen-solver path computes the top eigenpairs.
enum class SolverChoice { automatic, dense, matrix_free };

// A previous fit to start from (rolling windows overlap almost entirely).
// Matched to the new window's assets by name; unmatched assets start cold.
struct WarmStart {
  std::vector<std::string> assets;
  Eigen::MatrixXd loadings;           // assets.size() x k, return units
  Eigen::VectorXd specific_variance;  // assets.size(), return units squared
};

struct FitOptions {
  Method method = Method::max_likelihood;
  int factors = 5;                  // k, number of latent factors, >= 1 (the one default: models too)
  Basis basis = Basis::covariance;  // matrix the factors are extracted from
  Weighting weighting = Weighting::equal;
  double half_life = 0;             // in periods (dates); required > 0 for ewma
  // An asset needs at least this share of the window's (weighted) observations.
  double min_coverage = 0.8;
  // A series whose variance is below this fraction of the median asset variance
  // in the window counts as constant and is excluded.
  double constant_threshold = 1e-10;
  // Specific variance floor, as a fraction of the asset's variance s_ii.
  // Reaching it is a Heywood case: floored and flagged, never silently clipped.
  double specific_floor = 0.005;
  // When the iterative methods stop. Maximum likelihood: the largest scaled gradient of
  // the log-likelihood per observation, max over assets of |psi_i dl/dpsi_i| and
  // sqrt(s_ii) |dl/dL_i.| (docs/methodology.md, "When maximum likelihood stops"), is at
  // most this. Principal axis: the largest change of a communality (share of variance)
  // between iterations is below this.
  double tolerance = 1e-8;
  int max_iterations = 10000;  // EM passes plus Newton steps for ML
  bool accelerate = true;  // SQUAREM extrapolation of the EM steps (ML only)
  // Newton steps on the likelihood concentrated in psi once EM is close (ML only, up to
  // a few hundred assets; see engine/src/ml_polish.h).
  bool polish = true;
  SolverChoice solver = SolverChoice::automatic;
  // Eigenvalues to report; 0 means the default 2k + 10 (capped at the rank bound).
  int eigenvalues_to_report = 0;
  unsigned seed = 20261201;  // start vector of the iterative eigen-solver
  std::optional<WarmStart> warm_start;
  // Products carried between consecutive windows (window_products.h), owned by the caller
  // and brought up to date by the fit; null forms them afresh. The figures do not depend
  // on it beyond round-off (the bound is in window_products.h).
  WindowProducts* products = nullptr;

  // The first rule these options break, naming the field as spelled here ("min_coverage");
  // nullopt when usable.
  std::optional<Failure> FirstFailure() const;
  // True when usable; otherwise *error is "option 'field' = value: rule".
  bool IsValid(std::string* error) const;
};

enum class Termination {
  not_run,
  converged,           // tolerance met (or closed form, for pca)
  iteration_limit,     // max_iterations reached first
  numerical_failure,   // non-finite values or a failed decomposition
  // Not fitted: more factors than the window identifies (factor_limit.h); the message
  // names the factors, the window's assets and dates, and the limit.
  not_identified,
};

struct ExcludedAsset {
  std::string asset;
  std::string reason;  // plain words, e.g. "coverage 0.41 below minimum 0.80"
};

struct LikelihoodRatioTest {
  bool defined = false;  // needs positive degrees of freedom and n > N
  double statistic = 0;  // Bartlett-corrected
  double dof = 0;
  double p_value = 0;
};

struct FactorFit {
  Termination termination = Termination::not_run;
  std::string message;  // why it ended, in words

  // What was asked for and what ran.
  Method method = Method::max_likelihood;
  Basis basis = Basis::covariance;
  int factors = 0;
  std::string solver_path;  // e.g. "dense covariance", "spectra on T x T gram"
  std::string gap_handling;
  bool warm_started = false;

  // Sample.
  Eigen::Index periods = 0;         // T dates in the window
  double effective_sample_size = 0; // (sum w)^2 / sum w^2; equals T for equal weights
  std::vector<std::string> assets;  // the fitted assets (excluded ones removed)
  std::vector<ExcludedAsset> excluded;

  // Model, in return units (covariance scale) whatever the basis.
  Eigen::VectorXd mean;               // N
  Eigen::VectorXd scale;              // N, standard deviation of each asset
  Eigen::MatrixXd loadings;           // N x k
  Eigen::VectorXd specific_variance;  // N
  Eigen::VectorXd communality;        // N, row sums of squared loadings
  Eigen::MatrixXd factor_covariance;  // k x k (identity for the orthogonal model)
  std::vector<bool> heywood;          // N, specific variance hit the floor
  Eigen::VectorXd uniqueness;         // N, specific variance / s_ii (correlation scale)

  // Spectrum of the basis matrix (covariance or correlation).
  Eigen::VectorXd eigenvalues;  // largest first
  double trace = 0;
  Eigen::VectorXd explained_share;  // k, each factor's share of the trace
  double explained_total = 0;

  // Fit statistics.
  double log_likelihood = 0;  // per observation, up to constants (ML; also evaluated for others)
  LikelihoodRatioTest lr_test;
  int iterations = 0;        // ML: EM passes plus Newton steps plus profile steps
  bool converged = false;    // termination == converged
  // ML only (NaN otherwise): the stopping criterion at the returned estimate, the largest
  // scaled gradient of the log-likelihood (see FitOptions::tolerance), and how the
  // iterations split between EM passes and Newton steps.
  double largest_scaled_gradient = std::numeric_limits<double>::quiet_NaN();
  double tolerance = std::numeric_limits<double>::quiet_NaN();  // asked for (ML, principal axis)
  int em_passes = 0;
  int newton_steps = 0;
  int profile_steps = 0;  // evaluations of the fixed point in psi (panels above 200 assets)
  double fit_seconds = 0;  // wall time of the estimation alone

  bool IsSolutionUsable() const {
    return termination == Termination::converged || termination == Termination::iteration_limit;
  }
  std::string BriefReport() const;
  // Loadings on the correlation scale: row i divided by scale_i.
  Eigen::MatrixXd standardized_loadings() const;
};

// Fit from a returns panel (gaps allowed).
FactorFit fit(const ReturnsPanel& panel, const FitOptions& options);
// Fit from a given covariance or correlation matrix.
FactorFit fit(const CovarianceInput& input, const FitOptions& options);

const char* to_string(Method m);
const char* to_string(Basis b);
const char* to_string(Termination t);
// Parse the CLI/HTTP spellings ("pca", "principal-axis", "ml"); nullopt when unknown.
std::optional<Method> parse_method(const std::string& s);
std::optional<Basis> parse_basis(const std::string& s);

}  // namespace factorwatch::engine
