// `factorwatch model set NAME [options]`, `model show NAME`, `model list`.
//
// `set` on an existing model changes only the options given; any change starts a new
// version (stored windows keep the version they were fitted with).
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "cli_common.h"

namespace factorwatch::server {

struct ModelArguments {
  std::string name;
  std::string universe;  // list file, or "all"
  int window = 0;
  int step = 0;
  std::string method;
  int factors = 0;
  std::string basis;
  double half_life = 0;
  bool equal_weights = false;
  double min_coverage = 0;
  std::string first_as_of;
  std::string rotation;          // none | varimax | promax
  std::string kaiser_normalize;  // yes | no
  std::string align_to;          // previous | pinned | smoothed
  std::string pinned_window;     // date, or "first"
  double smoothing_half_life = 0;
  int min_shared_assets = 0;
  double alert_below = 0;
  double alert_below_pinned = 0;
  double tolerance = 0;
  std::string format = "table";
  // Which options were given (CLI11 fills these after parsing).
  CLI::Option *universe_opt = nullptr, *window_opt = nullptr, *step_opt = nullptr, *method_opt = nullptr,
              *factors_opt = nullptr, *basis_opt = nullptr, *half_life_opt = nullptr, *min_coverage_opt = nullptr,
              *first_as_of_opt = nullptr, *rotation_opt = nullptr, *kaiser_opt = nullptr, *align_to_opt = nullptr,
              *pinned_window_opt = nullptr, *smoothing_opt = nullptr, *min_shared_opt = nullptr,
              *alert_below_opt = nullptr, *alert_below_pinned_opt = nullptr,
              *tolerance_opt = nullptr;
  CLI::App *set = nullptr, *show = nullptr, *list = nullptr;
};

CLI::App* add_model_command(CLI::App& app, ModelArguments& arguments);
int run_model_command(const ModelArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server
