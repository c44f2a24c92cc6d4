#include "fit_command.h"

#include <chrono>
#include <cmath>
#include <cstdio>
#include <optional>
#include <iostream>
#include <stdexcept>
#include <string>
#include <utility>

#include "factorwatch/engine/fit.h"
#include "factorwatch/storage/covariance_csv.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/returns_csv.h"
#include "cli_common.h"
#include "cli_failure.h"
#include "fit_report.h"

namespace factorwatch::server {
namespace {

// Options the engine does not see: the source, the observations count, the window.
std::optional<engine::Failure> source_failure(const FitArguments& a) {
  if (a.returns_path.empty() == a.covariance_path.empty())
    return engine::failure(engine::FailureKind::bad_input, "", "",
                           "give exactly one source: --returns FILE, or --covariance FILE with --observations N");
  if (!a.covariance_path.empty() && !(a.observations > 1 && std::isfinite(a.observations))) {
    char value[32];
    std::snprintf(value, sizeof value, "%g", a.observations);
    return engine::bad_number("observations", value, "must be more than 1 (the number of dates behind the matrix)");
  }
  if (a.window && *a.window < 1) return engine::bad_number("window", std::to_string(*a.window), "must be at least 1 date");
  return std::nullopt;
}

engine::FitOptions to_fit_options(const FitArguments& a) {
  engine::FitOptions o;
  o.method = *engine::parse_method(a.method);  // CLI11 has checked the spelling
  o.basis = *engine::parse_basis(a.basis);
  o.factors = a.factors;
  if (a.half_life) {
    o.weighting = engine::Weighting::ewma;
    o.half_life = *a.half_life;
  }
  o.min_coverage = a.min_coverage;
  o.max_iterations = a.max_iterations;
  o.tolerance = a.tolerance;
  return o;
}

engine::FactorFit fit_returns(const FitArguments& a, const engine::FitOptions& options, FitSource& source) {
  const auto start = std::chrono::steady_clock::now();
  std::fprintf(stderr, "reading %s ...", a.returns_path.c_str());
  std::fflush(stderr);
  engine::ReturnsPanel panel = storage::read_returns_csv(a.returns_path);
  std::fprintf(stderr, " %lld assets x %lld dates in %.2f s\n", static_cast<long long>(panel.width()),
               static_cast<long long>(panel.periods()), seconds_since(start));
  source.dates_in_file = panel.periods();
  if (a.window && *a.window < panel.periods()) {
    panel = panel.last(*a.window);
    std::fprintf(stderr, "window: the last %ld of %lld dates\n", *a.window,
                 static_cast<long long>(source.dates_in_file));
  }
  source.first_date = panel.dates.front().iso();  // as the report writes them
  source.last_date = panel.dates.back().iso();
  std::fprintf(stderr, "fitting %s with %d factors on the %s basis, %s .. %s ...\n",
               engine::to_string(options.method), options.factors, engine::to_string(options.basis),
               source.first_date.c_str(), source.last_date.c_str());
  return engine::fit(panel, options);
}

engine::FactorFit fit_covariance(const FitArguments& a, const engine::FitOptions& options) {
  const auto start = std::chrono::steady_clock::now();
  std::fprintf(stderr, "reading %s ...", a.covariance_path.c_str());
  std::fflush(stderr);
  const engine::CovarianceInput input = storage::read_covariance_csv(a.covariance_path, a.observations);
  std::fprintf(stderr, " %lld x %lld matrix, %g observations, in %.2f s\n",
               static_cast<long long>(input.matrix.rows()), static_cast<long long>(input.matrix.cols()),
               input.observations, seconds_since(start));
  std::fprintf(stderr, "fitting %s with %d factors on the %s basis ...\n", engine::to_string(options.method),
               options.factors, engine::to_string(options.basis));
  return engine::fit(input, options);
}

}  // namespace

CLI::App* add_fit_command(CLI::App& app, FitArguments& a) {
  const engine::FitOptions defaults;
  a.factors = defaults.factors;
  a.min_coverage = defaults.min_coverage;
  a.max_iterations = defaults.max_iterations;
  a.tolerance = defaults.tolerance;

  CLI::App* fit = app.add_subcommand("fit", "Fit a factor model to a returns file or a covariance matrix");
  auto* returns = fit->add_option("--returns", a.returns_path,
                                  "Returns CSV, long (date,asset,return) or wide (date,<asset>,...)")
                      ->type_name("FILE");
  auto* covariance = fit->add_option("--covariance", a.covariance_path,
                                     "Covariance or correlation matrix CSV (needs --observations)")
                         ->type_name("FILE");
  auto* observations = fit->add_option("--observations", a.observations,
                                       "Number of dates behind the --covariance matrix")
                           ->type_name("N");
  returns->excludes(covariance);
  covariance->needs(observations);
  observations->needs(covariance);
  fit->add_option("--method", a.method, "Estimator: pca, principal-axis or ml (maximum likelihood)")
      ->check(CLI::IsMember({"pca", "principal-axis", "ml"}))
      ->capture_default_str();
  fit->add_option("--factors", a.factors, "Number of factors k")->type_name("K")->capture_default_str();
  fit->add_option("--basis", a.basis, "Extract the factors from the covariance or the correlation matrix")
      ->check(CLI::IsMember({"covariance", "correlation"}))
      ->capture_default_str();
  // add_option_function: an absent option stays std::nullopt, unlike a sentinel value.
  fit->add_option_function<double>(
         "--half-life", [&a](const double& v) { a.half_life = v; },
         "Exponential weights with this half-life in dates (default: equal weights)")
      ->type_name("DAYS")
      ->needs(returns);
  fit->add_option_function<long>(
         "--window", [&a](const long& v) { a.window = v; },
         "Use only the last DAYS dates of the file (default: all)")
      ->type_name("DAYS")
      ->needs(returns);
  fit->add_option("--min-coverage", a.min_coverage,
                  "Share of the window's dates an asset must have returns on to be fitted")
      ->type_name("SHARE")
      ->capture_default_str()
      ->needs(returns);
  fit->add_option("--format", a.format, "Output format: table or json")
      ->check(CLI::IsMember({"table", "json"}))
      ->capture_default_str();
  fit->add_option("--max-iterations", a.max_iterations, "Iteration limit of principal-axis and ml")
      ->type_name("N")
      ->capture_default_str();
  fit->add_option("--tolerance", a.tolerance,
                  "Where ml and principal-axis stop: ml, the largest scaled gradient of the log-likelihood; "
                  "principal-axis, the largest change of a communality")
      ->type_name("X")
      ->capture_default_str();
  return fit;
}

int run_fit_command(const FitArguments& a) {
  if (const auto f = source_failure(a)) return report_failure("fit", *f, "");
  const engine::FitOptions options = to_fit_options(a);
  if (const auto f = options.FirstFailure()) return report_failure("fit", *f, "");

  FitSource source;
  source.half_life = a.half_life;
  engine::FactorFit fit;
  try {
    if (!a.returns_path.empty()) {
      source.kind = "returns";
      source.path = a.returns_path;
      fit = fit_returns(a, options, source);
    } else {
      source.kind = "covariance";
      source.path = a.covariance_path;
      source.observations = a.observations;
      fit = fit_covariance(a, options);
    }
  } catch (const storage::InputError& e) {
    std::fprintf(stderr, "\nfactorwatch fit: %s\n", e.what());
    return kExitBadInput;
  } catch (const std::invalid_argument& e) {  // the engine refusing its inputs
    std::fprintf(stderr, "\nfactorwatch fit: %s\n", e.what());
    return kExitBadInput;
  }
  std::fprintf(stderr, "%s after %d iterations in %.3f s: %s\n", engine::to_string(fit.termination),
               fit.iterations, fit.fit_seconds, fit.message.c_str());

  if (a.format == "json") {
    std::cout << fit_report_json(fit, source).dump(2) << "\n";
  } else {
    write_fit_report_table(std::cout, fit, source);
  }
  std::cout.flush();
  return fit.IsSolutionUsable() ? kExitOk : kExitFailed;
}

}  // namespace factorwatch::server
