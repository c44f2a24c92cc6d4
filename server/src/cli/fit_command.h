// `factorwatch fit`: read a returns file or a covariance matrix, fit one factor model,
// print it as a table or JSON on stdout; progress and errors go to stderr.
#pragma once

#include <CLI/CLI.hpp>
#include <optional>
#include <string>

#include "factorwatch/engine/fit.h"

namespace factorwatch::server {

// The command line as given; mapped onto engine::FitOptions by run_fit_command.
struct FitArguments {
  std::string returns_path;
  std::string covariance_path;
  double observations = 0;
  std::string method = "ml";
  int factors = engine::FitOptions{}.factors;
  std::string basis = "covariance";
  std::optional<double> half_life;  // dates; absent = equal weights
  std::optional<long> window;       // last this many dates; absent = all
  double min_coverage = 0.8;
  std::string format = "table";
  int max_iterations = 0;  // filled from FitOptions' default when the command is added
  double tolerance = 0;
};

// Registers the subcommand and its options on `app`; values land in `arguments`.
CLI::App* add_fit_command(CLI::App& app, FitArguments& arguments);

// Exit codes: 0 a usable fit was printed; 1 the fit failed (numerical failure; the
// report is still printed); 2 bad options or a bad input file (message on stderr).
int run_fit_command(const FitArguments& arguments);

}  // namespace factorwatch::server
