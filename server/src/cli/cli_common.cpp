#include "cli_common.h"

#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <iostream>
#include <stdexcept>

#include "factorwatch/engine/caution.h"
#include "factorwatch/storage/data_directory.h"

namespace factorwatch::server {

void add_global_options(CLI::App& app, GlobalArguments& global) {
  app.add_option("--data", global.data_dir,
                 "Data directory holding factorwatch.db (default: $FACTORWATCH_DATA, else "
                 "$XDG_DATA_HOME/factorwatch or ~/.local/share/factorwatch)")
      ->type_name("DIR");
  app.fallthrough();  // so that `factorwatch load FILE --data DIR` works as well
}

std::unique_ptr<storage::Database> open_database(const GlobalArguments& global, const char* command) {
  try {
    return std::make_unique<storage::Database>(storage::database_path(global.data_dir));
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch %s: %s\n", command, e.what());
    return nullptr;
  }
}

void add_format_option(CLI::App* command, std::string& format) {
  command->add_option("--format", format, "table, csv or json")
      ->check(CLI::IsMember({"table", "csv", "json"}))
      ->capture_default_str();
}

void add_date_range_options(CLI::App* command, std::string& from, std::string& to) {
  command->add_option("--from", from, "First as-of date (default: the first window)")->type_name("DATE");
  command->add_option("--to", to, "Last as-of date (default: the latest window)")->type_name("DATE");
}

void print_caution(std::ostream& out) { out << "\nCaution: " << engine::kCaution << "\n"; }

void print_csv_caution(std::ostream& out) { out << csv_caution_line(); }

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

bool stderr_is_terminal() { return isatty(STDERR_FILENO) == 1; }

std::optional<engine::Failure> read_range(const std::string& model, const std::string& from, const std::string& to,
                                          pipeline::RangeQuery& range) {
  range.model = model;
  if (auto f = pipeline::read_date("from", from, range.from)) return f;
  return pipeline::read_date("to", to, range.to);
}

}  // namespace factorwatch::server
