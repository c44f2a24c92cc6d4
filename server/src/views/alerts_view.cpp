#include "alerts_view.h"

#include <cstdio>

#include "drift_view.h"
#include "factorwatch/engine/caution.h"
#include "factorwatch/pipeline/window_query.h"
#include "text_format.h"

namespace factorwatch::server {

std::string movers_text(const std::vector<engine::AssetMove>& movers, std::size_t count) {
  std::string out;
  for (std::size_t i = 0; i < movers.size() && i < count; ++i) {
    char change[32];
    std::snprintf(change, sizeof change, " (%+.3f)", movers[i].standardized_change);
    out += (i ? "; " : "") + movers[i].asset + change;
  }
  return out;
}

std::string alerts_csv(const pipeline::AlertList& a) {
  std::string out = csv_caution_line();
  out += "as_of,against,against_as_of,factor,congruence,threshold,moved_most\n";
  for (const storage::DriftAlert& x : a.alerts)
    out += x.as_of.iso() + "," + x.against + "," + x.against_as_of.iso() + "," + pipeline::factor_name(x.factor - 1) + "," +
           csv_number(x.congruence) + "," + exact_number(x.threshold) + "," +
           csv_field(movers_text(x.movers, kMoversShown)) + "\n";
  return out;
}

nlohmann::ordered_json alerts_json(const pipeline::AlertList& a) {
  nlohmann::ordered_json j;
  j["caution"] = engine::kCaution;
  j["model"] = a.model.name;
  j["version"] = a.model.version;
  j["thresholds"] = thresholds_json(a.model.config);
  nlohmann::ordered_json alerts = nlohmann::ordered_json::array();
  for (const storage::DriftAlert& x : a.alerts) {
    nlohmann::ordered_json movers = nlohmann::ordered_json::array();
    for (const engine::AssetMove& m : x.movers)
      movers.push_back({{"asset", m.asset},
                        {"standardized_change", json_number(m.standardized_change)},
                        {"exposure_change", json_number(m.exposure_change)}});
    alerts.push_back({{"as_of", x.as_of},
                      {"against", x.against},
                      {"against_as_of", x.against_as_of},
                      {"factor", pipeline::factor_name(x.factor - 1)},
                      {"congruence", json_number(x.congruence)},
                      {"threshold", x.threshold},
                      {"moved_most", std::move(movers)}});
  }
  j["alerts"] = std::move(alerts);
  return j;
}

}  // namespace factorwatch::server
