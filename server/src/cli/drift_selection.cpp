#include "drift_selection.h"

#include <cstdio>

namespace factorwatch::server {

std::string threshold_text(double threshold) {
  if (!(threshold > 0)) return "off";
  char text[48];
  std::snprintf(text, sizeof text, "congruence below %g", threshold);
  return text;
}

int report_query_failure(const char* command, const pipeline::QueryFailure& f, const std::string& model) {
  switch (f.outcome) {
    case pipeline::QueryOutcome::found: return kExitOk;
    case pipeline::QueryOutcome::no_model:
      std::fprintf(stderr, "factorwatch %s: %s (factorwatch model list shows them)\n", command, f.message.c_str());
      return kExitBadInput;
    default: break;
  }
  // The asset is an argument, not an option.
  const std::string field = f.field == "asset" ? "asset '" + f.value + "'" : "option '--" + f.field + "'";
  const std::string value = f.value.empty() || f.field == "asset" ? "" : " = '" + f.value + "'";
  std::string hint;
  if (f.refresh_helps) hint = "; run: factorwatch refresh " + model;
  if (f.outcome == pipeline::QueryOutcome::unknown_asset) hint = "; factorwatch exposures " + model + " lists the assets fitted";
  std::fprintf(stderr, "factorwatch %s: %s%s: %s%s\n", command, field.c_str(), value.c_str(), f.message.c_str(),
               hint.c_str());
  return f.outcome == pipeline::QueryOutcome::not_found ? kExitFailed : kExitBadInput;
}

}  // namespace factorwatch::server
