// How two served windows are compared, in one place for the refresh's second pass (which
// stores the comparison) and for compare_stored_windows (served_windows.h, which
// recomputes it asset by asset): the same rule must give the same numbers.
#pragma once

#include <optional>
#include <string>

#include "factorwatch/engine/drift.h"
#include "factorwatch/engine/fit.h"
#include "factorwatch/storage/windows.h"

namespace factorwatch::pipeline::detail {

engine::WindowFactors factors_of(const engine::FactorFit& fit);

// True when the window was aligned directly onto the window of this as-of date: then it
// already is in that window's basis. `alignment` null: not aligned yet.
bool aligned_directly_onto(const storage::WindowAlignment* alignment, engine::Date as_of);

// Drift of `now` against `then`, after rotating `now` onto `then` (engine::rotated_onto:
// what a chain of alignments accumulated is not drift), unless it already is in its basis.
engine::DriftComparison compare_served(const engine::FactorFit& now, const engine::FactorFit& then, int min_shared,
                                       bool already_in_then_basis);

}  // namespace factorwatch::pipeline::detail
