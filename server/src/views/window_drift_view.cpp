#include "window_drift_view.h"

#include <algorithm>

#include "drift_view.h"
#include "factorwatch/engine/caution.h"
#include "factorwatch/pipeline/window_query.h"
#include "text_format.h"

namespace factorwatch::server {

std::string window_drift_title(const pipeline::WindowDrift& d) {
  const storage::DriftRecord& r = d.record;
  return "window as of " + r.as_of.iso() + " against the " + r.against + " window as of " + r.against_as_of.iso() + ": " +
         r.status + ", " + std::to_string(r.shared) + " shared assets";
}

std::string window_drift_csv(const pipeline::WindowDrift& d) {
  const storage::DriftRecord& r = d.record;
  const engine::DriftComparison& c = d.comparison;
  const Eigen::Index k = std::max<Eigen::Index>(d.model.config.fit.factors, c.exposure_change.cols());
  std::string out = csv_caution_line();
  out += "# model " + d.model.name + " version " + std::to_string(d.model.version) + ", " + window_drift_title(d) + "\n";
  if (r.congruence.size() == 0) {
    out += "# not compared" + (c.message.empty() ? std::string() : ": " + c.message) + "\n";
  } else {
    out += "# congruence";
    for (Eigen::Index j = 0; j < r.congruence.size(); ++j)
      out += (j ? ", " : " ") + pipeline::factor_name(j) + " " + csv_number(r.congruence(j));
    out += "; principal angles (degrees)";
    for (Eigen::Index j = 0; j < r.principal_angles_degrees.size(); ++j)
      out += (j ? ", " : " ") + csv_number(r.principal_angles_degrees(j));
    const std::string flagged = pipeline::factor_list(pipeline::flagged_factors(r, pipeline::alert_threshold(d.model.config, r.against)));
    if (!flagged.empty()) out += "; flagged: " + flagged;
    out += "\n";
  }
  out += "asset";
  for (Eigen::Index j = 0; j < k; ++j) out += ",exposure_change_" + pipeline::factor_name(j);
  for (Eigen::Index j = 0; j < k; ++j) out += ",standardized_change_" + pipeline::factor_name(j);
  out += ",standardized_change_norm,communality_change\n";
  for (std::size_t i : d.order) {
    const auto row = static_cast<Eigen::Index>(i);
    out += csv_field(c.assets[i]);
    for (Eigen::Index j = 0; j < k; ++j) {
      out += ',';
      if (j < c.exposure_change.cols()) append_exact_number(out, c.exposure_change(row, j));
    }
    for (Eigen::Index j = 0; j < k; ++j) {
      out += ',';
      if (j < c.standardized_change.cols()) append_exact_number(out, c.standardized_change(row, j));
    }
    out += ',';
    append_exact_number(out, pipeline::standardized_norm(c, i));
    out += ',';
    append_exact_number(out, c.communality_change(row));
    out += '\n';
  }
  return out;
}

nlohmann::ordered_json window_drift_json(const pipeline::WindowDrift& d) {
  const storage::DriftRecord& r = d.record;
  const engine::DriftComparison& c = d.comparison;
  nlohmann::ordered_json j;
  j["caution"] = engine::kCaution;
  j["model"] = d.model.name;
  j["version"] = d.model.version;
  j["as_of"] = r.as_of;
  j["against"] = r.against;
  j["against_as_of"] = r.against_as_of;
  j["status"] = r.status;
  if (!c.message.empty()) j["message"] = c.message;
  if (!d.note.empty()) j["note"] = d.note;
  j["shared_assets"] = r.shared;
  j["factors"] = d.model.config.fit.factors;
  const double threshold = pipeline::alert_threshold(d.model.config, r.against);
  j["threshold"] = threshold > 0 ? nlohmann::ordered_json(threshold) : nlohmann::ordered_json();
  j["congruence"] = numbers_json(r.congruence);
  j["principal_angles_degrees"] = numbers_json(r.principal_angles_degrees);
  j["factor_variance_change"] = numbers_json(r.factor_variance_change);
  j["explained_share_change"] = numbers_json(r.explained_share_change);
  nlohmann::ordered_json flagged = nlohmann::ordered_json::array();
  for (Eigen::Index f : pipeline::flagged_factors(r, threshold)) flagged.push_back(pipeline::factor_name(f));
  j["flagged"] = std::move(flagged);
  nlohmann::ordered_json assets = nlohmann::ordered_json::array();
  for (std::size_t i : d.order) {
    const auto row = static_cast<Eigen::Index>(i);
    nlohmann::ordered_json a;
    a["asset"] = c.assets[i];
    a["exposure_change"] = numbers_json(c.exposure_change.row(row).transpose());
    a["standardized_change"] = numbers_json(c.standardized_change.row(row).transpose());
    a["standardized_change_norm"] = pipeline::standardized_norm(c, i);
    a["communality_change"] = c.communality_change(row);
    assets.push_back(std::move(a));
  }
  j["assets"] = std::move(assets);
  return j;
}

}  // namespace factorwatch::server
