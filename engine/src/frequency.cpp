#include "factorwatch/engine/frequency.h"

namespace factorwatch::engine {

Frequency frequency_from_gap(double days) {
  if (days <= 4) return {"daily", 252};
  if (days <= 10) return {"weekly", 52};
  if (days <= 45) return {"monthly", 12};
  if (days <= 120) return {"quarterly", 4};
  return {"annual", 1};
}

}  // namespace factorwatch::engine
