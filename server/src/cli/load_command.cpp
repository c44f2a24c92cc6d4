#include "load_command.h"

#include <chrono>
#include <cstdio>
#include <stdexcept>

#include "factorwatch/storage/ingest.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/returns_csv.h"

namespace factorwatch::server {
namespace {

std::string thousands(std::size_t n) {
  std::string digits = std::to_string(n), out;
  for (std::size_t i = 0; i < digits.size(); ++i) {
    if (i > 0 && (digits.size() - i) % 3 == 0) out += ',';
    out += digits[i];
  }
  return out;
}

}  // namespace

CLI::App* add_load_command(CLI::App& app, LoadArguments& a) {
  CLI::App* load = app.add_subcommand("load", "Store a returns file in the database (all or nothing)");
  load->add_option("FILE", a.path, "Returns CSV, long (date,asset,return) or wide (date,<asset>,...)")
      ->required()
      ->type_name("FILE");
  auto* prices = load->add_flag("--prices", a.prices,
                                "The cells are prices: store simple returns between consecutive dates");
  load->add_flag("--log-returns", a.log_returns, "With --prices: store log returns instead of simple returns")
      ->needs(prices);
  load->add_option("--max-input-mb", a.max_input_mb,
                   "Refuse a file (or stream) larger than this many MiB; about 0.55 GB is a wide file of "
                   "20,000 assets x 2,500 dates")
      ->type_name("MIB")
      ->check(CLI::Range(std::size_t{1}, std::size_t{1} << 20))
      ->capture_default_str();
  return load;
}

int run_load_command(const LoadArguments& a, const GlobalArguments& global) {
  const auto start = std::chrono::steady_clock::now();
  storage::ReturnsReadOptions read_options;
  if (a.prices)
    read_options.values = a.log_returns ? storage::ValuesInFile::prices_to_log_returns
                                        : storage::ValuesInFile::prices_to_simple_returns;
  storage::IngestSource source;
  source.path = a.path;
  source.values_in_file = storage::to_string(read_options.values);
  read_options.max_input_bytes = a.max_input_mb << 20;
  storage::ReturnsFile file;
  try {
    std::fprintf(stderr, "reading %s ...", a.path.c_str());
    std::fflush(stderr);
    // One read of the file (a pipe can be read only once); the hash is of those bytes.
    file = storage::read_returns_file(a.path, read_options);
    source.content_sha256 = file.content_sha256;
  } catch (const storage::InputError& e) {
    std::fprintf(stderr, "\nfactorwatch load: %s\nThe file was rejected; the database is unchanged.\n", e.what());
    return kExitBadInput;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "\nfactorwatch load: %s\nThe file was rejected; the database is unchanged.\n", e.what());
    return kExitBadInput;
  }
  source.layout = file.layout;
  source.data_rows = file.data_rows;
  const double read_seconds = seconds_since(start);
  std::fprintf(stderr, " %s layout, %s rows, %lld dates x %lld assets in %.2f s\n", file.layout.c_str(),
               thousands(file.data_rows).c_str(), static_cast<long long>(file.panel.periods()),
               static_cast<long long>(file.panel.width()), read_seconds);

  auto db = open_database(global, "load");
  if (!db) return kExitFailed;
  storage::LoadSummary s;
  try {
    s = storage::store_returns(*db, file.panel, source);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch load: storing %s failed, nothing was stored: %s\n", a.path.c_str(), e.what());
    return kExitFailed;
  }
  std::printf("loaded %s into %s\n", a.path.c_str(), db->path().c_str());
  std::printf("  file:     %s layout, %s, %s calendar, %s data rows, sha256 %s\n", file.layout.c_str(),
              source.values_in_file.c_str(), file.weekends ? "all-days" : "weekday",
              thousands(file.data_rows).c_str(), source.content_sha256.c_str());
  std::printf("  dates:    %s .. %s (%zu), assets %zu (%zu new)\n", s.first_date.iso().c_str(), s.last_date.iso().c_str(),
              s.dates_in_file, s.assets_in_file, s.new_assets);
  std::printf("  values:   %s new, %s unchanged, %s corrected\n", thousands(s.values_new).c_str(),
              thousands(s.values_unchanged).c_str(), thousands(s.values_corrected).c_str());
  if (s.windows_marked_stale > 0)
    std::printf("  windows:  %zu marked stale; `factorwatch refresh` refits them\n", s.windows_marked_stale);
  std::printf("  outcome:  %s (ingest run %ld), %.2f s (reading %.2f s, storing %.2f s)\n", s.outcome.c_str(),
              s.run_id, seconds_since(start), read_seconds, s.seconds);
  if (!s.moved_forward) {
    // Exit 3: a nightly feed that sends yesterday's file again has stopped, and a script
    // that only checks for failure would not notice.
    std::printf("  no new date: the file brings no date after the latest stored one%s%s (exit status 3)\n",
                s.latest_before ? ", " : "", engine::iso_or_empty(s.latest_before).c_str());
    return kExitNoNewData;
  }
  return kExitOk;
}

}  // namespace factorwatch::server
