#include "exposures_view.h"

#include "text_format.h"
#include "window_heading.h"

namespace factorwatch::server {

std::string exposures_csv(const SelectedWindow& s) {
  const engine::FactorFit& f = s.window.fit;
  const Eigen::Index k = f.loadings.cols();
  std::string out = csv_caution_line();
  out += window_csv_heading(s) + ", " + engine::to_string(f.method) + "\n";
  out += "asset";
  for (Eigen::Index j = 0; j < k; ++j) out += "," + factor_name(j);
  out += ",communality,specific_variance,uniqueness,heywood\n";
  out.reserve(out.size() + s.rows.size() * static_cast<std::size_t>(24 * (k + 4)));
  for (std::size_t i : s.rows) {
    out += csv_field(f.assets[i]);
    for (Eigen::Index j = 0; j < k; ++j) {
      out += ',';
      append_exact_number(out, f.loadings(static_cast<Eigen::Index>(i), j));
    }
    for (double x : {f.communality(i), f.specific_variance(i), f.uniqueness(i)}) {
      out += ',';
      append_exact_number(out, x);
    }
    out += f.heywood[i] ? ",true\n" : ",false\n";
  }
  return out;
}

nlohmann::ordered_json exposures_json(const SelectedWindow& s) {
  const engine::FactorFit& f = s.window.fit;
  nlohmann::ordered_json j = window_json_heading(s);
  j["periods"] = f.periods;
  j["method"] = engine::to_string(f.method);
  j["basis"] = engine::to_string(f.basis);
  j["factors"] = f.factors;
  j["termination"] = engine::to_string(f.termination);
  j["stale"] = s.window.stale;
  j["configuration_hash"] = s.window.configuration_hash;
  j["input_hash"] = s.window.input_hash;
  if (!s.note.empty()) j["note"] = s.note;
  j["explained_share"] = std::vector<double>(f.explained_share.data(), f.explained_share.data() + f.explained_share.size());
  nlohmann::ordered_json rows = nlohmann::ordered_json::array();
  for (std::size_t i : s.rows) {
    nlohmann::ordered_json row;
    row["asset"] = f.assets[i];
    std::vector<double> loadings(static_cast<std::size_t>(f.loadings.cols()));
    for (Eigen::Index k = 0; k < f.loadings.cols(); ++k)
      loadings[static_cast<std::size_t>(k)] = f.loadings(static_cast<Eigen::Index>(i), k);
    row["loadings"] = loadings;
    row["communality"] = f.communality(i);
    row["specific_variance"] = f.specific_variance(i);
    row["uniqueness"] = f.uniqueness(i);
    row["heywood"] = static_cast<bool>(f.heywood[i]);
    rows.push_back(std::move(row));
  }
  j["assets"] = std::move(rows);
  j["not_in_window"] = missing_json(s);
  nlohmann::ordered_json excluded = nlohmann::ordered_json::array();
  for (const auto& e : f.excluded) excluded.push_back({{"asset", e.asset}, {"reason", e.reason}});
  j["excluded"] = std::move(excluded);
  return j;
}

}  // namespace factorwatch::server
