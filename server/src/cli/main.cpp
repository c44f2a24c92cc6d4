// The factorwatch command. Subcommands live in their own files; main only wires them up
// and turns command-line mistakes into exit code 2, the usual code for a usage error.
#include <malloc.h>

#include <CLI/CLI.hpp>

#include "alerts_command.h"
#include "cli_common.h"
#include "drift_command.h"
#include "exposures_command.h"
#include "factor_returns_command.h"
#include "fit_command.h"
#include "history_command.h"
#include "load_command.h"
#include "model_command.h"
#include "portfolio_command.h"
#include "refresh_command.h"
#include "residuals_command.h"
#include "risk_command.h"
#include "serve_command.h"
#include "specific_risk_command.h"
#include "token_command.h"
#include "verify_command.h"
#include "windows_command.h"

int main(int argc, char** argv) {
  using namespace factorwatch::server;
  // Keep freed memory in the process: a refresh allocates and frees the same large
  // matrices (hundreds of KB each) window after window, and glibc's defaults hand each
  // back to the kernel, so every window paid for fresh zeroed pages (page faults were a
  // third of the alignment pass's time; docs/performance.md).
  mallopt(M_MMAP_THRESHOLD, 64 << 20);
  mallopt(M_TRIM_THRESHOLD, 256 << 20);
  CLI::App app{"factorwatch: statistical factor risk models fitted to asset returns"};
  app.require_subcommand(1);
  GlobalArguments global;
  add_global_options(app, global);

  FitArguments fit_arguments;
  LoadArguments load_arguments;
  ModelArguments model_arguments;
  RefreshArguments refresh_arguments;
  WindowsArguments windows_arguments;
  WindowArguments exposures_arguments, specific_arguments;
  DaemonOptions serve_options;
  serve_options.program = argv[0];
  TokenArguments token_arguments;
  DriftArguments drift_arguments;
  HistoryArguments history_arguments;
  AlertsArguments alerts_arguments;
  PortfolioArguments portfolio_arguments;
  RiskArguments risk_arguments;
  FactorReturnsArguments factor_returns_arguments;
  ResidualsArguments residuals_arguments;
  CLI::App* load = add_load_command(app, load_arguments);
  CLI::App* model = add_model_command(app, model_arguments);
  CLI::App* refresh = add_refresh_command(app, refresh_arguments);
  CLI::App* windows = add_windows_command(app, windows_arguments);
  CLI::App* exposures = add_exposures_command(app, exposures_arguments);
  CLI::App* specific = add_specific_risk_command(app, specific_arguments);
  CLI::App* drift = add_drift_command(app, drift_arguments);
  CLI::App* history = add_history_command(app, history_arguments);
  CLI::App* alerts = add_alerts_command(app, alerts_arguments);
  CLI::App* portfolio = add_portfolio_command(app, portfolio_arguments);
  CLI::App* risk = add_risk_command(app, risk_arguments);
  CLI::App* factor_returns = add_factor_returns_command(app, factor_returns_arguments);
  CLI::App* residuals = add_residuals_command(app, residuals_arguments);
  CLI::App* fit = add_fit_command(app, fit_arguments);
  CLI::App* serve = add_serve_command(app, serve_options);
  CLI::App* token = add_token_command(app, token_arguments);
  VerifyArguments verify_arguments;
  CLI::App* verify = add_verify_command(app, verify_arguments);
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);  // prints help, or the error with a hint
    return code == 0 ? 0 : kExitBadInput;
  }
  if (load->parsed()) return run_load_command(load_arguments, global);
  if (model->parsed()) return run_model_command(model_arguments, global);
  if (refresh->parsed()) return run_refresh_command(refresh_arguments, global);
  if (windows->parsed()) return run_windows_command(windows_arguments, global);
  if (exposures->parsed()) return run_exposures_command(exposures_arguments, global);
  if (specific->parsed()) return run_specific_risk_command(specific_arguments, global);
  if (drift->parsed()) return run_drift_command(drift_arguments, global);
  if (history->parsed()) return run_history_command(history_arguments, global);
  if (alerts->parsed()) return run_alerts_command(alerts_arguments, global);
  if (portfolio->parsed()) return run_portfolio_command(portfolio_arguments, global);
  if (risk->parsed()) return run_risk_command(risk_arguments, global);
  if (factor_returns->parsed()) return run_factor_returns_command(factor_returns_arguments, global);
  if (residuals->parsed()) return run_residuals_command(residuals_arguments, global);
  if (fit->parsed()) return run_fit_command(fit_arguments);
  if (serve->parsed()) return run_serve_command(serve_options, global);
  if (token->parsed()) return run_token_command(token_arguments, global);
  if (verify->parsed()) return run_verify_command(verify_arguments, global);
  return kExitBadInput;
}
