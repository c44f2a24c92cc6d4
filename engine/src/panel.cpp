#include "factorwatch/engine/panel.h"

#include <algorithm>

namespace factorwatch::engine {

ReturnsPanel ReturnsPanel::last(Eigen::Index count) const {
  const Eigen::Index T = periods();
  const Eigen::Index take = std::clamp<Eigen::Index>(count, 0, T);
  ReturnsPanel out;
  out.assets = assets;
  out.dates.assign(dates.end() - take, dates.end());
  out.values = values.bottomRows(take);
  return out;
}

}  // namespace factorwatch::engine
