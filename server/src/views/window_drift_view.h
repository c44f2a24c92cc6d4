// One window compared with the window before it (or the pinned one), asset by asset, as
// CSV and JSON: the same bytes from `factorwatch drift NAME --window DATE` and from
// GET .../drift?window=DATE. Both carry the caution.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "factorwatch/pipeline/drift_query.h"

namespace factorwatch::server {

// The caution line, a comment line naming the two windows and the status, one with the
// congruence per factor and the principal angles, then asset, exposure_change_f1..,
// standardized_change_f1.., standardized_change_norm, communality_change; largest
// standardized change first.
std::string window_drift_csv(const pipeline::WindowDrift& drift);

nlohmann::ordered_json window_drift_json(const pipeline::WindowDrift& drift);

// "window as of X against the previous window as of Y: compared, 40 shared assets"
std::string window_drift_title(const pipeline::WindowDrift& drift);

}  // namespace factorwatch::server
