// The names of the engine's enumerations, and their parsers: values every layer reads and
// writes (stored statuses, options in words), kept apart from the algorithms that produce
// them so that storage can name a status without linking an estimator.
#include "factorwatch/engine/alignment.h"
#include "factorwatch/engine/drift.h"
#include "factorwatch/engine/factor_scores.h"
#include "factorwatch/engine/rotation.h"

namespace factorwatch::engine {

const char* to_string(AlignmentStatus s) {
  switch (s) {
    case AlignmentStatus::aligned: return "aligned";
    case AlignmentStatus::no_reference: return "no reference";
    case AlignmentStatus::too_few_shared: return "too few shared assets";
    case AlignmentStatus::factors_differ: return "factor counts differ";
  }
  return "unknown";
}

const char* to_string(DriftStatus s) {
  switch (s) {
    case DriftStatus::compared: return "compared";
    case DriftStatus::too_few_shared: return "too few shared assets";
    case DriftStatus::factors_differ: return "factor counts differ";
  }
  return "unknown";
}

const char* to_string(ScoreMethod m) { return m == ScoreMethod::bartlett ? "bartlett" : "regression"; }

std::optional<ScoreMethod> parse_score_method(const std::string& s) {
  if (s == "bartlett") return ScoreMethod::bartlett;
  if (s == "regression") return ScoreMethod::regression;
  return std::nullopt;
}

const char* to_string(RotationMethod m) {
  switch (m) {
    case RotationMethod::none: return "none";
    case RotationMethod::varimax: return "varimax";
    case RotationMethod::promax: return "promax";
  }
  return "?";
}

std::optional<RotationMethod> parse_rotation(const std::string& s) {
  if (s == "none") return RotationMethod::none;
  if (s == "varimax") return RotationMethod::varimax;
  if (s == "promax") return RotationMethod::promax;
  return std::nullopt;
}

}  // namespace factorwatch::engine
