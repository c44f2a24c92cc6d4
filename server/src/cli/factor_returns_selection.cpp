#include "factor_returns_selection.h"

#include <cstdio>


namespace factorwatch::server {

void add_score_method_option(CLI::App* command, std::string& method) {
  command
      ->add_option("--method", method,
                   "Factor returns by Bartlett's weighted least squares (conditionally unbiased) or by regression "
                   "(Thomson; shrunk towards zero, least mean squared error)")
      ->check(CLI::IsMember({"bartlett", "regression"}))
      ->capture_default_str();
}

}  // namespace factorwatch::server
