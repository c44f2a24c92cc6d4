#include "cli_failure.h"

#include <cstdio>

#include "cli_common.h"

namespace factorwatch::server {

int exit_code(engine::FailureKind kind) {
  switch (kind) {
    case engine::FailureKind::bad_input:
    case engine::FailureKind::unknown_name:
    case engine::FailureKind::rejected: return kExitBadInput;
    case engine::FailureKind::not_stored:
    case engine::FailureKind::not_usable: return kExitFailed;
  }
  return kExitFailed;
}

std::string cli_flag(const std::string& field) {
  std::string flag = "--" + field;
  for (char& c : flag)
    if (c == '_') c = '-';
  return flag;
}

std::string cli_text(const engine::Failure& f) {
  if (f.field.empty() || f.field == "model") return f.rule;
  if (f.field == "universe") return engine::describe(f, "universe");
  if (f.field == "portfolio") return engine::describe(f, "PORTFOLIO");
  if (f.field == "asset") {  // an argument: named by its value, which is not repeated
    engine::Failure named = f;
    named.value.clear();
    return engine::describe(named, "asset '" + f.value + "'");
  }
  return engine::describe(f, "option '" + cli_flag(f.field) + "'");
}

std::string cli_hint(const engine::Failure& f, const std::string& model) {
  if (f.refresh_helps) return "; run: factorwatch refresh " + model;
  if (f.kind == engine::FailureKind::unknown_name) {
    if (f.field == "model") return " (factorwatch model list shows them)";
    if (f.field == "portfolio" || f.field == "holdings_as_of" || f.field == "benchmark")
      return " (factorwatch portfolio list shows them)";
    if (f.field == "asset") return "; factorwatch exposures " + model + " lists the assets fitted";
  }
  if (f.kind == engine::FailureKind::not_usable) return " (factorwatch windows " + model + " lists them)";
  return "";
}

int report_failure(const char* command, const engine::Failure& f, const std::string& model) {
  std::fprintf(stderr, "factorwatch %s: %s%s\n", command, cli_text(f).c_str(), cli_hint(f, model).c_str());
  return exit_code(f.kind);
}

}  // namespace factorwatch::server
