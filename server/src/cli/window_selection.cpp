#include "window_selection.h"

#include <cstdio>
#include <stdexcept>

namespace factorwatch::server {

void add_window_options(CLI::App* command, WindowArguments& a) {
  command->add_option("NAME", a.model, "Model name")->required();
  command->add_option("--as-of", a.as_of, "Window ending on this date, or the latest before it (default: the latest)")
      ->type_name("DATE");
  command->add_option("--assets", a.assets, "Only these assets, comma-separated, in this order")->type_name("LIST");
  add_format_option(command, a.format);
  command->add_option("--limit", a.limit, "Table rows to show (0: all)")->type_name("N")->capture_default_str();
}

int run_on_window(const WindowArguments& a, const GlobalArguments& global, const char* command,
                  const std::function<void(const pipeline::SelectedWindow&)>& print) {
  auto db = open_database(global, command);
  if (!db) return kExitFailed;
  try {
    pipeline::WindowQuery query{a.model, std::nullopt, split_list(a.assets)};
    if (auto f = pipeline::read_date("as_of", a.as_of, query.as_of)) return report_failure(command, *f, a.model);
    const pipeline::WindowPick pick = pipeline::pick_window(*db, query);
    if (pick.failure) return report_failure(command, *pick.failure, a.model);
    print(pipeline::read_picked_window(*db, pick, query));
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch %s: %s\n", command, e.what());
    return kExitFailed;
  }
  return kExitOk;
}

}  // namespace factorwatch::server
