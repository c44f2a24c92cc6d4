#include "verify_command.h"

#include <cstdio>
#include <iostream>
#include <nlohmann/json.hpp>

#include "factorwatch/storage/verify.h"

namespace factorwatch::server {

CLI::App* add_verify_command(CLI::App& app, VerifyArguments& a) {
  CLI::App* verify =
      app.add_subcommand("verify", "Check the whole database: SQLite's integrity check and every stored checksum");
  verify->add_option("--format", a.format, "table or json")->check(CLI::IsMember({"table", "json"}))->capture_default_str();
  return verify;
}

int run_verify_command(const VerifyArguments& a, const GlobalArguments& global) {
  const auto db = open_database(global, "verify");
  if (!db) return kExitFailed;
  storage::VerifyReport report;
  try {
    report = storage::verify_database(*db);
  } catch (const std::exception& e) {  // SQLite could not even read a table through
    std::fprintf(stderr, "factorwatch verify: %s\n", e.what());
    return kExitFailed;
  }
  if (a.format == "json") {
    nlohmann::json problems = nlohmann::json::array();
    for (const auto& p : report.problems) problems.push_back({{"table", p.table}, {"row", p.row}, {"problem", p.what}});
    const nlohmann::json out = {{"database", db->path()},          {"returns_rows", report.returns_rows},
                                {"windows", report.windows},       {"alignments", report.alignments},
                                {"drift_rows", report.drift_rows}, {"blobs", report.blobs},
                                {"problems", problems},            {"seconds", report.seconds}};
    std::cout << out.dump(2) << "\n";
  } else {
    for (const auto& p : report.problems)
      std::cout << p.table << (p.row.empty() ? "" : ", " + p.row) << ": " << p.what << "\n";
    std::printf("%s: %zu returns rows, %zu windows, %zu alignments, %zu drift rows, %zu blobs checked in %.2f s: %s\n",
                db->path().c_str(), report.returns_rows, report.windows, report.alignments, report.drift_rows,
                report.blobs, report.seconds,
                report.problems.empty() ? "no problems"
                                        : (std::to_string(report.problems.size()) + " problem" +
                                           (report.problems.size() == 1 ? "" : "s"))
                                              .c_str());
  }
  return report.problems.empty() ? kExitOk : kExitFailed;
}

}  // namespace factorwatch::server
