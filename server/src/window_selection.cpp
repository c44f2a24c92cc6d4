#include "window_selection.h"

#include <cstdio>
#include <stdexcept>
#include <unordered_map>

#include "cli_common.h"
#include "factorwatch/storage/assets.h"

namespace factorwatch::server {

std::string factor_name(Eigen::Index j) { return "f" + std::to_string(j + 1); }

void add_window_options(CLI::App* command, WindowArguments& a) {
  command->add_option("NAME", a.model, "Model name")->required();
  command->add_option("--as-of", a.as_of, "Window ending on this date, or the latest before it (default: the latest)")
      ->type_name("DATE");
  command->add_option("--assets", a.assets, "Only these assets, comma-separated, in this order")->type_name("LIST");
  command->add_option("--format", a.format, "table, csv or json")
      ->check(CLI::IsMember({"table", "csv", "json"}))
      ->capture_default_str();
  command->add_option("--limit", a.limit, "Table rows to show (0: all)")->type_name("N")->capture_default_str();
}

int run_on_window(const WindowArguments& a, const GlobalArguments& global, const char* command,
                  const std::function<void(const SelectedWindow&)>& print) {
  auto db = open_database(global, command);
  if (!db) return kExitFailed;
  int code = kExitOk;
  try {
    const auto s = select_window(*db, a, command, &code);
    if (s) print(*s);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch %s: %s\n", command, e.what());
    return kExitFailed;
  }
  return code;
}

nlohmann::ordered_json missing_json(const SelectedWindow& s) {
  nlohmann::ordered_json missing = nlohmann::ordered_json::array();
  for (const auto& m : s.missing) missing.push_back({{"asset", m.asset}, {"reason", m.reason}});
  return missing;
}

std::optional<SelectedWindow> select_window(storage::Database& db, const WindowArguments& a, const char* command,
                                            int* code) {
  *code = kExitBadInput;
  SelectedWindow s;
  const auto model = storage::find_model(db, a.model);
  if (!model) {
    std::fprintf(stderr, "factorwatch %s: no model named '%s' (factorwatch model list shows them)\n", command,
                 a.model.c_str());
    return std::nullopt;
  }
  s.model = *model;
  std::optional<storage::WindowRecord> window;
  try {
    window = storage::read_window(db, model->id, a.as_of, true);
  } catch (const std::invalid_argument& e) {
    std::fprintf(stderr, "factorwatch %s: option '--as-of': %s\n", command, e.what());
    return std::nullopt;
  }
  if (!window) {
    std::fprintf(stderr, "factorwatch %s: model '%s' has no window%s%s yet; run: factorwatch refresh %s\n", command,
                 a.model.c_str(), a.as_of.empty() ? "" : " on or before ", a.as_of.c_str(), a.model.c_str());
    *code = kExitFailed;
    return std::nullopt;
  }
  s.window = std::move(*window);
  if (!a.as_of.empty() && s.window.as_of != a.as_of)
    s.note = "no window ends on " + a.as_of + "; showing the latest before it, as of " + s.window.as_of;
  const engine::FactorFit& fit = s.window.fit;
  if (a.assets.empty()) {
    for (std::size_t i = 0; i < fit.assets.size(); ++i) s.rows.push_back(i);
  } else {
    std::unordered_map<std::string, std::size_t> row_of;
    for (std::size_t i = 0; i < fit.assets.size(); ++i) row_of.emplace(fit.assets[i], i);
    std::unordered_map<std::string, std::string> excluded;
    for (const auto& e : fit.excluded) excluded.emplace(e.asset, e.reason);
    for (const std::string& name : split_list(a.assets)) {
      if (auto r = row_of.find(name); r != row_of.end()) {
        s.rows.push_back(r->second);
      } else if (auto e = excluded.find(name); e != excluded.end()) {
        s.missing.push_back({name, "excluded from the fit: " + e->second});
      } else if (storage::has_asset(db, name)) {
        s.missing.push_back({name, "no returns in this window, or outside the model's universe"});
      } else {
        s.missing.push_back({name, "unknown asset (no returns stored)"});
      }
    }
  }
  *code = kExitOk;
  return s;
}

}  // namespace factorwatch::server
