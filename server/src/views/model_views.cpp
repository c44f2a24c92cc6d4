#include "model_views.h"

#include "factorwatch/engine/caution.h"
#include "text_format.h"

namespace factorwatch::server {
namespace {

const char* yes_no(bool b) { return b ? "true" : "false"; }

struct ModelLine {
  storage::ModelVersion model;
  std::size_t windows;
  std::optional<engine::Date> latest_as_of;
};

std::vector<ModelLine> model_lines(storage::Database& db) {
  std::vector<ModelLine> out;
  for (auto& m : storage::list_models(db)) {
    const storage::WindowCounts counts = storage::count_windows(db, m.id);
    out.push_back({m, counts.windows, counts.latest_as_of});
  }
  return out;
}

}  // namespace

nlohmann::ordered_json windows_json(const storage::ModelVersion& model, const std::vector<storage::WindowSummary>& windows) {
  nlohmann::ordered_json j;
  j["caution"] = engine::kCaution;
  j["model"] = model.name;
  j["version"] = model.version;
  nlohmann::ordered_json rows = nlohmann::ordered_json::array();
  for (const auto& w : windows)
    rows.push_back({{"as_of", w.as_of},
                    {"first_date", w.first_date},
                    {"periods", w.periods},
                    {"assets", w.asset_count},
                    {"excluded", w.excluded_count},
                    {"factors", w.factors},
                    {"termination", w.termination},
                    {"usable", w.usable},
                    {"warm_started", w.warm_started},
                    {"iterations", w.iterations},
                    {"largest_scaled_gradient", json_number(w.largest_scaled_gradient)},
                    {"log_likelihood", w.log_likelihood},
                    {"explained_share", w.explained_total},
                    {"heywood_cases", w.heywood_count},
                    {"fit_seconds", w.fit_seconds},
                    {"total_seconds", w.total_seconds},
                    {"stale", w.stale},
                    {"alignment", w.alignment},
                    {"alignment_residual", json_number(w.alignment_residual)},
                    // Last, as in the CSV, whose earlier columns keep their places.
                    {"reason", w.usable ? nlohmann::ordered_json() : nlohmann::ordered_json(w.reason)}});
  j["windows"] = std::move(rows);
  return j;
}

std::string windows_csv(const std::vector<storage::WindowSummary>& windows) {
  std::string out = csv_caution_line();
  out += "as_of,first_date,periods,assets,excluded,factors,termination,usable,warm_started,iterations,"
         "largest_scaled_gradient,log_likelihood,explained_share,heywood_cases,fit_seconds,total_seconds,stale,alignment,alignment_residual,reason\n";
  for (const auto& w : windows) {
    out += w.as_of.iso() + "," + w.first_date.iso() + "," + std::to_string(w.periods) + "," + std::to_string(w.asset_count) + "," +
           std::to_string(w.excluded_count) + "," + std::to_string(w.factors) + "," + csv_field(w.termination) + "," +
           yes_no(w.usable) + "," + yes_no(w.warm_started) + "," + std::to_string(w.iterations) + "," +
           csv_number(w.largest_scaled_gradient) + "," + exact_number(w.log_likelihood) + "," + exact_number(w.explained_total) + "," +
           std::to_string(w.heywood_count) + "," + exact_number(w.fit_seconds) + "," + exact_number(w.total_seconds) +
           "," + yes_no(w.stale) + "," + csv_field(w.alignment) + "," + csv_number(w.alignment_residual) + "," +
           csv_field(w.reason) + "\n";
  }
  return out;
}

std::string standing_text(const std::string& model, const pipeline::ModelStanding& s) {
  if (!s.latest_stored) return "no returns stored yet";
  std::string text = "returns stored to " + s.latest_stored->iso() + "; ";
  if (!s.behind()) return text + "up to date";
  return text + "behind: " + std::to_string(s.pending) + " window" + (s.pending == 1 ? "" : "s") +
         " to fit (new dates or stale windows); run: factorwatch refresh " + model;
}

nlohmann::ordered_json model_json(const storage::ModelVersion& m, const storage::WindowCounts& counts,
                                  const pipeline::ModelStanding& standing) {
  nlohmann::ordered_json j;
  j["model"] = m.name;
  j["version"] = m.version;
  j["created_at"] = m.created_at;
  j["configuration_hash"] = m.configuration_hash;
  j["configuration"] = m.config.to_json();
  j["windows"] = counts.windows;
  j["stale_windows"] = counts.stale;
  j["latest_as_of"] = counts.latest_as_of;
  j["latest_stored_date"] = standing.latest_stored;
  j["pending_windows"] = standing.pending;
  j["behind"] = standing.behind();
  return j;
}

nlohmann::ordered_json models_json(storage::Database& db) {
  nlohmann::ordered_json rows = nlohmann::ordered_json::array();
  for (const ModelLine& line : model_lines(db)) {
    const storage::ModelConfig& c = line.model.config;
    rows.push_back({{"model", line.model.name},
                    {"version", line.model.version},
                    {"method", engine::to_string(c.fit.method)},
                    {"factors", c.fit.factors},
                    {"window", c.window},
                    {"step", c.step},
                    {"windows", line.windows},
                    {"latest_as_of", line.latest_as_of}});
  }
  return {{"models", std::move(rows)}};
}

std::string models_csv(storage::Database& db) {
  std::string out = "model,version,method,factors,window,step,windows,latest_as_of\n";
  for (const ModelLine& line : model_lines(db)) {
    const storage::ModelConfig& c = line.model.config;
    out += csv_field(line.model.name) + "," + std::to_string(line.model.version) + "," + engine::to_string(c.fit.method) +
           "," + std::to_string(c.fit.factors) + "," + std::to_string(c.window) + "," + std::to_string(c.step) + "," +
           std::to_string(line.windows) + "," + engine::iso_or_empty(line.latest_as_of) + "\n";
  }
  return out;
}

}  // namespace factorwatch::server
