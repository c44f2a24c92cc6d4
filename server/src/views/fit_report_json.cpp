// The fit as one JSON object: every number the table shows and the full per-asset model.
// Non-finite numbers come out as null (nlohmann's rule), so consumers never see NaN text.
#include "factorwatch/engine/caution.h"
#include "fit_report.h"

namespace factorwatch::server {
namespace {

// ordered_json: keys stay in the order written below (what first, caution last).
using json = nlohmann::ordered_json;

json vector_json(const Eigen::VectorXd& v) {
  json out = json::array();
  for (Eigen::Index i = 0; i < v.size(); ++i) out.push_back(v[i]);
  return out;
}

json rows_json(const Eigen::MatrixXd& m) {
  json out = json::array();
  for (Eigen::Index i = 0; i < m.rows(); ++i) {
    json row = json::array();
    for (Eigen::Index j = 0; j < m.cols(); ++j) row.push_back(m(i, j));
    out.push_back(std::move(row));
  }
  return out;
}

json source_json(const FitSource& s) {
  json out = {{"kind", s.kind}, {"file", s.path}};
  if (s.kind == "returns") {
    out["first_date"] = s.first_date;
    out["last_date"] = s.last_date;
    out["dates_in_file"] = s.dates_in_file;
    out["weighting"] = s.half_life ? "exponential" : "equal";
    out["half_life"] = s.half_life ? json(*s.half_life) : json(nullptr);
  } else {
    out["observations"] = s.observations;
  }
  return out;
}

}  // namespace

json fit_report_json(const engine::FactorFit& fit, const FitSource& source) {
  json heywood = json::array();
  for (std::size_t i = 0; i < fit.heywood.size(); ++i)
    if (fit.heywood[i]) heywood.push_back(fit.assets[i]);
  json excluded = json::array();
  for (const auto& e : fit.excluded) excluded.push_back({{"asset", e.asset}, {"reason", e.reason}});
  json lr = nullptr;
  if (fit.lr_test.defined)
    lr = {{"statistic", fit.lr_test.statistic}, {"dof", fit.lr_test.dof}, {"p_value", fit.lr_test.p_value}};

  return json{
      {"method", engine::to_string(fit.method)},
      {"basis", engine::to_string(fit.basis)},
      {"factors", fit.factors},
      {"source", source_json(source)},
      {"periods", fit.periods},
      {"effective_sample_size", fit.effective_sample_size},
      {"termination", engine::to_string(fit.termination)},
      {"converged", fit.converged},
      {"usable", fit.IsSolutionUsable()},
      {"iterations", fit.iterations},
      {"em_passes", fit.em_passes},
      {"newton_steps", fit.newton_steps},
      {"profile_steps", fit.profile_steps},
      {"largest_scaled_gradient", fit.largest_scaled_gradient},
      {"tolerance", fit.tolerance},
      {"message", fit.message},
      {"solver_path", fit.solver_path},
      {"gap_handling", fit.gap_handling},
      {"warm_started", fit.warm_started},
      {"fit_seconds", fit.fit_seconds},
      {"assets", fit.assets},
      {"excluded", excluded},
      {"heywood", heywood},
      {"loadings", rows_json(fit.loadings)},
      {"communality", vector_json(fit.communality)},
      {"specific_variance", vector_json(fit.specific_variance)},
      {"uniqueness", vector_json(fit.uniqueness)},
      {"mean", vector_json(fit.mean)},
      {"scale", vector_json(fit.scale)},
      {"factor_covariance", rows_json(fit.factor_covariance)},
      {"eigenvalues", vector_json(fit.eigenvalues)},
      {"trace", fit.trace},
      {"explained_share", vector_json(fit.explained_share)},
      {"explained_total", fit.explained_total},
      {"log_likelihood", fit.log_likelihood},
      {"lr_test", lr},
      {"caution", engine::kCaution},
  };
}

}  // namespace factorwatch::server
