// The part `exposures` and `specific-risk` share: find the model, pick the window (the
// latest, or the latest at or before --as-of) and the assets (all, or --assets in the
// order given, with a reason for each one the window does not hold).
#pragma once

#include <CLI/CLI.hpp>
#include <functional>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "factorwatch/storage/database.h"
#include "factorwatch/storage/models.h"
#include "cli_common.h"
#include "factorwatch/storage/windows.h"

namespace factorwatch::server {

struct WindowArguments {
  std::string model;
  std::string as_of;   // "" = latest
  std::string assets;  // "" = all, else comma-separated
  std::string format = "table";
  int limit = 0;       // table rows to show; 0 = all
};

struct MissingAsset {
  std::string asset;
  std::string reason;
};

struct SelectedWindow {
  storage::ModelVersion model;
  storage::WindowRecord window;
  std::vector<std::size_t> rows;  // into window.fit.assets, in output order
  std::vector<MissingAsset> missing;
  std::string note;               // e.g. the as-of date asked for has no window
};

// nullopt after printing the reason on stderr; *code is then the exit code.
std::optional<SelectedWindow> select_window(storage::Database& db, const WindowArguments& a, const char* command,
                                            int* code);

// NAME, --as-of, --assets, --format, --limit: the options of every one-window command.
void add_window_options(CLI::App* command, WindowArguments& arguments);

// Opens the database, selects the window and hands it to `print`; turns every failure
// into a message on stderr and an exit code.
int run_on_window(const WindowArguments& arguments, const GlobalArguments& global, const char* command,
                  const std::function<void(const SelectedWindow&)>& print);

// JSON list of the assets asked for that the window does not hold, with the reason.
nlohmann::ordered_json missing_json(const SelectedWindow& s);

// "f1", "f2", ...
std::string factor_name(Eigen::Index j);

}  // namespace factorwatch::server
