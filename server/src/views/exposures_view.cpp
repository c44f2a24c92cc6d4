#include "exposures_view.h"

#include <cmath>

#include "text_format.h"
#include "window_heading.h"

namespace factorwatch::server {
namespace {

// Correlated factors (promax): the loadings are a pattern, and the structure L Phi (the
// covariances of each asset with the factors) says something the pattern does not. An
// orthogonal model stays orthogonal through alignment, up to rounding.
bool oblique(const engine::FactorFit& f) {
  return f.factor_covariance.size() > 0 && !f.factor_covariance.isIdentity(1e-9);
}

}  // namespace

std::string exposures_csv(const pipeline::SelectedWindow& s) {
  const engine::FactorFit& f = s.window.fit;
  const Eigen::Index k = f.loadings.cols();
  const bool with_structure = oblique(f);
  const Eigen::MatrixXd structure = with_structure ? Eigen::MatrixXd(f.loadings * f.factor_covariance) : Eigen::MatrixXd();
  std::string out = csv_caution_line();
  out += window_csv_heading(s) + ", " + engine::to_string(f.method) + ", " + pipeline::factor_basis_text(s) + "\n";
  out += "asset";
  for (Eigen::Index j = 0; j < k; ++j) out += "," + pipeline::factor_name(j);
  out += ",communality,specific_variance,uniqueness,heywood";
  if (with_structure)
    for (Eigen::Index j = 0; j < k; ++j) out += ",structure_" + pipeline::factor_name(j);
  out += "\n";
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
    out += f.heywood[i] ? ",true" : ",false";
    if (with_structure)
      for (Eigen::Index j = 0; j < k; ++j) {
        out += ',';
        append_exact_number(out, structure(static_cast<Eigen::Index>(i), j));
      }
    out += '\n';
  }
  return out;
}

nlohmann::ordered_json exposures_json(const pipeline::SelectedWindow& s) {
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
  // The basis the loadings are served in: the model's rotation, then the alignment.
  j["rotation"] = engine::to_string(s.model.config.rotation.method);
  if (const auto& a = s.window.alignment) {
    nlohmann::ordered_json alignment;
    alignment["status"] = a->status;
    alignment["reference"] = a->reference;
    alignment["reference_as_of"] = a->reference_as_of;
    alignment["shared_assets"] = a->shared;
    alignment["residual"] = std::isfinite(a->residual) ? nlohmann::ordered_json(a->residual) : nlohmann::ordered_json();
    j["alignment"] = std::move(alignment);
  } else {
    j["alignment"] = nullptr;  // not aligned yet: served as fitted (and rotated)
  }
  nlohmann::ordered_json phi = nlohmann::ordered_json::array();
  for (Eigen::Index r = 0; r < f.factor_covariance.rows(); ++r) {
    std::vector<double> row(static_cast<std::size_t>(f.factor_covariance.cols()));
    for (Eigen::Index c = 0; c < f.factor_covariance.cols(); ++c) row[static_cast<std::size_t>(c)] = f.factor_covariance(r, c);
    phi.push_back(row);
  }
  j["factor_covariance"] = std::move(phi);
  const bool with_structure = oblique(f);
  const Eigen::MatrixXd structure = with_structure ? Eigen::MatrixXd(f.loadings * f.factor_covariance) : Eigen::MatrixXd();
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
    if (with_structure) {
      std::vector<double> r(static_cast<std::size_t>(structure.cols()));
      for (Eigen::Index k = 0; k < structure.cols(); ++k) r[static_cast<std::size_t>(k)] = structure(static_cast<Eigen::Index>(i), k);
      row["structure"] = r;
    }
    rows.push_back(std::move(row));
  }
  j["assets"] = std::move(rows);
  j["not_in_window"] = pipeline::missing_json(s);
  nlohmann::ordered_json excluded = nlohmann::ordered_json::array();
  for (const auto& e : f.excluded) excluded.push_back({{"asset", e.asset}, {"reason", e.reason}});
  j["excluded"] = std::move(excluded);
  return j;
}

}  // namespace factorwatch::server
