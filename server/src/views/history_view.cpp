#include "history_view.h"

#include <algorithm>
#include <cmath>

#include "drift_view.h"
#include "factorwatch/engine/caution.h"
#include "factorwatch/pipeline/window_query.h"
#include "text_format.h"

namespace factorwatch::server {
namespace {

Eigen::Index history_columns(const pipeline::AssetHistory& h) {
  Eigen::Index k = h.model.config.fit.factors;
  for (const auto& p : h.points) k = std::max(k, p.exposures.size());
  return k;
}

}  // namespace

std::string history_csv(const pipeline::AssetHistory& h) {
  const Eigen::Index k = history_columns(h);
  std::string out = csv_caution_line();
  out += "as_of,present";
  for (Eigen::Index j = 0; j < k; ++j) out += ",exposure_" + pipeline::factor_name(j);
  out += ",communality,specific_variance,specific_volatility,alignment\n";
  for (const pipeline::ExposurePoint& p : h.points) {
    out += p.as_of.iso() + (p.present ? ",true" : ",false");
    for (Eigen::Index j = 0; j < k; ++j) {
      out += ',';
      if (p.present && j < p.exposures.size()) append_exact_number(out, p.exposures(j));
    }
    for (double x : {p.communality, p.specific_variance, std::sqrt(p.specific_variance)}) {
      out += ',';
      if (p.present) append_exact_number(out, x);
    }
    out += "," + csv_field(p.alignment) + "\n";
  }
  return out;
}

nlohmann::ordered_json history_json(const pipeline::AssetHistory& h) {
  nlohmann::ordered_json j;
  j["caution"] = engine::kCaution;
  j["model"] = h.model.name;
  j["version"] = h.model.version;
  j["asset"] = h.asset;
  j["factors"] = h.model.config.fit.factors;
  nlohmann::ordered_json windows = nlohmann::ordered_json::array();
  for (const pipeline::ExposurePoint& p : h.points) {
    nlohmann::ordered_json w;
    w["as_of"] = p.as_of;
    w["present"] = p.present;
    const nlohmann::ordered_json none;
    w["exposures"] = p.present ? numbers_json(p.exposures) : nlohmann::ordered_json::array();
    w["communality"] = p.present ? json_number(p.communality) : none;
    w["specific_variance"] = p.present ? json_number(p.specific_variance) : none;
    w["specific_volatility"] = p.present ? json_number(std::sqrt(p.specific_variance)) : none;
    w["alignment"] = p.alignment;
    windows.push_back(std::move(w));
  }
  j["windows"] = std::move(windows);
  return j;
}

}  // namespace factorwatch::server
