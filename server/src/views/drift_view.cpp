#include "drift_view.h"

#include "factorwatch/engine/caution.h"
#include "factorwatch/pipeline/window_query.h"
#include "text_format.h"

namespace factorwatch::server {
namespace {

// Cells j = 0..k-1 of v, empty where v is shorter (a row that was not compared).
void append_cells(std::string& out, const Eigen::VectorXd& v, Eigen::Index k) {
  for (Eigen::Index j = 0; j < k; ++j) {
    out += ',';
    if (j < v.size()) out += csv_number(v(j));
  }
}

bool compared(const storage::DriftRecord& r) { return r.status == engine::to_string(engine::DriftStatus::compared); }

}  // namespace

nlohmann::ordered_json numbers_json(const Eigen::VectorXd& v) {
  nlohmann::ordered_json a = nlohmann::ordered_json::array();
  for (Eigen::Index j = 0; j < v.size(); ++j) a.push_back(json_number(v(j)));
  return a;
}

nlohmann::ordered_json thresholds_json(const storage::ModelConfig& c) {
  nlohmann::ordered_json j;
  for (const char* against : {"previous", "pinned"}) {
    const double t = pipeline::alert_threshold(c, against);
    j[against] = t > 0 ? nlohmann::ordered_json(t) : nlohmann::ordered_json();
  }
  return j;
}

std::string drift_csv(const pipeline::DriftSeries& s) {
  const Eigen::Index k = pipeline::factor_columns(s.model.config, s.rows);
  std::string out = csv_caution_line();
  out += "as_of,against,against_as_of,status,shared_assets";
  for (Eigen::Index j = 0; j < k; ++j) out += ",congruence_" + pipeline::factor_name(j);
  for (Eigen::Index j = 0; j < k; ++j) out += ",angle_" + std::to_string(j + 1) + "_degrees";
  for (Eigen::Index j = 0; j < k; ++j) out += ",factor_variance_change_" + pipeline::factor_name(j);
  for (Eigen::Index j = 0; j < k; ++j) out += ",explained_share_change_" + pipeline::factor_name(j);
  out += ",mean_exposure_change,mean_communality_change,flagged\n";
  for (const storage::DriftRecord& r : s.rows) {
    out += r.as_of.iso() + "," + r.against + "," + r.against_as_of.iso() + "," + csv_field(r.status) + "," +
           std::to_string(r.shared);
    append_cells(out, r.congruence, k);
    append_cells(out, r.principal_angles_degrees, k);
    append_cells(out, r.factor_variance_change, k);
    append_cells(out, r.explained_share_change, k);
    out += ',';
    if (compared(r)) out += exact_number(r.mean_exposure_change);
    out += ',';
    if (compared(r)) out += exact_number(r.communality_change);
    out += "," + csv_field(pipeline::factor_list(pipeline::flagged_factors(r, pipeline::alert_threshold(s.model.config, r.against)))) + "\n";
  }
  return out;
}

nlohmann::ordered_json drift_json(const pipeline::DriftSeries& s) {
  nlohmann::ordered_json j;
  j["caution"] = engine::kCaution;
  j["model"] = s.model.name;
  j["version"] = s.model.version;
  j["factors"] = s.model.config.fit.factors;
  j["thresholds"] = thresholds_json(s.model.config);
  nlohmann::ordered_json rows = nlohmann::ordered_json::array();
  for (const storage::DriftRecord& r : s.rows) {
    nlohmann::ordered_json row;
    row["as_of"] = r.as_of;
    row["against"] = r.against;
    row["against_as_of"] = r.against_as_of;
    row["status"] = r.status;
    row["shared_assets"] = r.shared;
    row["congruence"] = numbers_json(r.congruence);
    row["principal_angles_degrees"] = numbers_json(r.principal_angles_degrees);
    row["factor_variance_change"] = numbers_json(r.factor_variance_change);
    row["explained_share_change"] = numbers_json(r.explained_share_change);
    row["mean_exposure_change"] = compared(r) ? json_number(r.mean_exposure_change) : nlohmann::ordered_json();
    row["mean_communality_change"] = compared(r) ? json_number(r.communality_change) : nlohmann::ordered_json();
    nlohmann::ordered_json flagged = nlohmann::ordered_json::array();
    for (Eigen::Index f : pipeline::flagged_factors(r, pipeline::alert_threshold(s.model.config, r.against))) flagged.push_back(pipeline::factor_name(f));
    row["flagged"] = std::move(flagged);
    rows.push_back(std::move(row));
  }
  j["rows"] = std::move(rows);
  return j;
}

}  // namespace factorwatch::server
