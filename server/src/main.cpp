// The factorwatch command. Subcommands live in their own files; main only wires them up
// and turns command-line mistakes into exit code 2, the usual code for a usage error.
#include <CLI/CLI.hpp>

#include "fit_command.h"

int main(int argc, char** argv) {
  CLI::App app{"factorwatch: statistical factor risk models fitted to asset returns"};
  app.require_subcommand(1);
  factorwatch::server::FitArguments fit_arguments;
  CLI::App* fit = factorwatch::server::add_fit_command(app, fit_arguments);
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);  // prints help, or the error with a hint
    return code == 0 ? 0 : 2;
  }
  if (fit->parsed()) return factorwatch::server::run_fit_command(fit_arguments);
  return 2;
}
