#include "drift_selection.h"

#include <cstdio>

namespace factorwatch::server {

std::string threshold_text(double threshold) {
  if (!(threshold > 0)) return "off";
  char text[48];
  std::snprintf(text, sizeof text, "congruence below %g", threshold);
  return text;
}

}  // namespace factorwatch::server
