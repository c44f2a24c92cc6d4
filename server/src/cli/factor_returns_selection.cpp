#include "factor_returns_selection.h"

#include <cstdio>

#include "drift_selection.h"

namespace factorwatch::server {

void add_score_method_option(CLI::App* command, std::string& method) {
  command
      ->add_option("--method", method,
                   "Factor returns by Bartlett's weighted least squares (conditionally unbiased) or by regression "
                   "(Thomson; shrunk towards zero, least mean squared error)")
      ->check(CLI::IsMember({"bartlett", "regression"}))
      ->capture_default_str();
}

int report_scores_failure(const char* command, const pipeline::QueryFailure& f, const std::string& model) {
  if (f.outcome == pipeline::QueryOutcome::not_found && f.field.empty()) {
    std::fprintf(stderr, "factorwatch %s: %s%s\n", command, f.message.c_str(),
                 f.refresh_helps ? ("; run: factorwatch refresh " + model).c_str() : "");
    return kExitFailed;
  }
  return report_query_failure(command, f, model);
}

}  // namespace factorwatch::server
