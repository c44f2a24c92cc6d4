// What every database command shares: the --data option, opening the database with a
// plain message on failure, exit codes, and the small pieces of table and CSV output.
#pragma once

#include <CLI/CLI.hpp>
#include <chrono>
#include <memory>
#include <optional>
#include <ostream>
#include <string>
#include <vector>

#include "factorwatch/pipeline/request_dates.h"
#include "factorwatch/storage/database.h"
#include "text_format.h"

namespace factorwatch::server {

// Exit codes of every command.
inline constexpr int kExitOk = 0;
inline constexpr int kExitFailed = 1;    // the job ran and failed (e.g. an unusable fit)
inline constexpr int kExitBadInput = 2;  // bad options or a bad input file; nothing changed
// The job ran and changed nothing worth a night: `load` of a file that brings no date after
// the latest stored one (the feed has not moved on). Distinct so a nightly script can say so.
inline constexpr int kExitNoNewData = 3;

struct GlobalArguments {
  std::string data_dir;  // --data; "" = FACTORWATCH_DATA or the default
};

// Adds --data to the top-level command (subcommands accept it too).
void add_global_options(CLI::App& app, GlobalArguments& global);

// Opens (creating and migrating) the database; nullptr after printing the reason.
std::unique_ptr<storage::Database> open_database(const GlobalArguments& global, const char* command);

// --format table|csv|json (the default is the variable's value), shared by the reading commands.
void add_format_option(CLI::App* command, std::string& format);
// --from DATE and --to DATE: a range of as-of dates, open where not given.
void add_date_range_options(CLI::App* command, std::string& from, std::string& to);

// The range a command's --from and --to ask for, their dates read once here
// (pipeline::read_date); the failure naming the option that is not a date.
std::optional<engine::Failure> read_range(const std::string& model, const std::string& from, const std::string& to,
                                          pipeline::RangeQuery& range);

// The caution as the last lines of a table.
void print_caution(std::ostream& out);
// The caution as the first line of a CSV file (a '#' comment line).
void print_csv_caution(std::ostream& out);

// Wall seconds since `start`, for the timings commands print.
double seconds_since(std::chrono::steady_clock::time_point start);

// True when stderr is a terminal (progress lines are for people, not for log files).
bool stderr_is_terminal();

}  // namespace factorwatch::server
