#include <cstdio>

#include "factorwatch/engine/fit.h"

namespace factorwatch::engine {

std::string FactorFit::BriefReport() const {
  char buf[512];
  std::snprintf(buf, sizeof buf,
                "%s fit, %d factors on the %s basis: %s after %d iterations (%s); %zu assets "
                "fitted, %zu excluded, %lld dates (effective n %.1f); explained %.1f%%; "
                "log-likelihood %.6g; %.3f s",
                to_string(method), factors, to_string(basis), to_string(termination), iterations,
                message.c_str(), assets.size(), excluded.size(), static_cast<long long>(periods),
                effective_sample_size, 100.0 * explained_total, log_likelihood, fit_seconds);
  return buf;
}

Eigen::MatrixXd FactorFit::standardized_loadings() const {
  return scale.cwiseInverse().asDiagonal() * loadings;
}

}  // namespace factorwatch::engine
