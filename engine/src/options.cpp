// Options of the engine: their validation and the names of the fit methods and bases.
// Values every layer reads; the algorithms that take them are elsewhere.
#include <cmath>
#include <sstream>

#include "factorwatch/engine/alignment.h"
#include "factorwatch/engine/fit.h"
#include "factorwatch/engine/rotation.h"

namespace factorwatch::engine {
namespace {

template <typename T>
std::string number_text(T value) {
  std::ostringstream os;
  os << value;
  return os.str();
}

template <typename T>
Failure broken(const char* field, T value, const char* rule) {
  return bad_number(field, number_text(value), rule);
}

// The rotation's messages name the field alone ("rotation tolerance = ...": they are not
// a fit's options).
template <typename T>
bool fail(std::string* error, const char* field, T value, const char* rule) {
  if (error) *error = describe(broken(field, value, rule), field);
  return false;
}

}  // namespace

std::optional<Failure> FitOptions::FirstFailure() const {
  if (factors < 1) return broken("factors", factors, "must be at least 1");
  if (weighting == Weighting::ewma && !(half_life > 0 && std::isfinite(half_life)))
    return broken("half_life", half_life, "must be a positive number of periods for EWMA weights");
  if (!(min_coverage > 0 && min_coverage <= 1)) return broken("min_coverage", min_coverage, "must be in (0, 1]");
  if (!(constant_threshold >= 0 && constant_threshold < 1))
    return broken("constant_threshold", constant_threshold, "must be in [0, 1)");
  if (!(specific_floor > 0 && specific_floor < 1))
    return broken("specific_floor", specific_floor, "must be in (0, 1)");
  // Above 0.01 "converged" would be far from the optimum for either meaning of the tolerance.
  if (!(tolerance > 0 && tolerance <= 0.01)) return broken("tolerance", tolerance, "must be in (0, 0.01]");
  if (max_iterations < 1) return broken("max_iterations", max_iterations, "must be at least 1");
  if (eigenvalues_to_report < 0)
    return broken("eigenvalues_to_report", eigenvalues_to_report, "must be 0 (default) or positive");
  if (warm_start) {
    const auto& w = *warm_start;
    if (w.loadings.rows() != Eigen::Index(w.assets.size()) ||
        w.specific_variance.size() != Eigen::Index(w.assets.size()))
      return broken("warm_start", w.assets.size(), "assets, loadings rows and specific_variance must have the same length");
    if (w.loadings.cols() != factors)
      return broken("warm_start.loadings columns", w.loadings.cols(), "must equal factors");
  }
  return std::nullopt;
}

bool FitOptions::IsValid(std::string* error) const {
  const auto f = FirstFailure();
  if (f && error) *error = describe(*f);
  return !f;
}

const char* to_string(Method m) {
  switch (m) {
    case Method::pca: return "pca";
    case Method::principal_axis: return "principal-axis";
    case Method::max_likelihood: return "ml";
  }
  return "?";
}

const char* to_string(Basis b) { return b == Basis::covariance ? "covariance" : "correlation"; }

const char* to_string(Termination t) {
  switch (t) {
    case Termination::not_run: return "not_run";
    case Termination::converged: return "converged";
    case Termination::iteration_limit: return "iteration_limit";
    case Termination::numerical_failure: return "numerical_failure";
    case Termination::not_identified: return "not_identified";
  }
  return "?";
}

std::optional<Method> parse_method(const std::string& s) {
  if (s == "pca") return Method::pca;
  if (s == "principal-axis") return Method::principal_axis;
  if (s == "ml") return Method::max_likelihood;
  return std::nullopt;
}

std::optional<Basis> parse_basis(const std::string& s) {
  if (s == "covariance") return Basis::covariance;
  if (s == "correlation") return Basis::correlation;
  return std::nullopt;
}

bool RotationOptions::IsValid(std::string* error) const {
  if (!(tolerance > 0 && std::isfinite(tolerance)))
    return fail(error, "rotation tolerance", tolerance, "must be a positive finite number");
  if (max_iterations < 1) return fail(error, "rotation max_iterations", max_iterations, "must be at least 1");
  if (!(promax_power > 1 && std::isfinite(promax_power)))
    return fail(error, "promax power", promax_power, "must be a finite number greater than 1");
  return true;
}

bool AlignmentOptions::IsValid(std::string* error) const {
  if (min_shared_assets >= 1) return true;
  if (error)
    *error = "option 'min_shared_assets' (minimum shared assets) = " + std::to_string(min_shared_assets) +
             ": must be at least 1";
  return false;
}

}  // namespace factorwatch::engine
