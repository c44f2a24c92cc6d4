#include "window_comparison.h"

#include "factorwatch/engine/alignment.h"
#include "factorwatch/engine/factor_basis.h"

namespace factorwatch::pipeline::detail {

engine::WindowFactors factors_of(const engine::FactorFit& fit) {
  return {fit.assets, fit.loadings, fit.scale, fit.factor_covariance, fit.explained_share};
}

bool aligned_directly_onto(const storage::WindowAlignment* alignment, engine::Date as_of) {
  return alignment && alignment->status == engine::to_string(engine::AlignmentStatus::aligned) &&
         alignment->reference_as_of == as_of;
}

engine::DriftComparison compare_served(const engine::FactorFit& now, const engine::FactorFit& then, int min_shared,
                                       bool already_in_then_basis) {
  if (already_in_then_basis) return engine::compare_factors(factors_of(now), factors_of(then), min_shared);
  return engine::compare_factors(factors_of(engine::rotated_onto(now, then, min_shared)), factors_of(then), min_shared);
}

}  // namespace factorwatch::pipeline::detail
