#include "residuals_view.h"

#include <cmath>
#include <cstdio>

#include "drift_view.h"
#include "text_format.h"
#include "window_heading.h"

namespace factorwatch::server {
namespace {

using nlohmann::ordered_json;

// "f1 0.0123, f2 -0.0045": exact numbers, for the CSV heading.
std::string loadings_text(const Eigen::VectorXd& loadings) {
  std::string out;
  for (Eigen::Index j = 0; j < loadings.size(); ++j)
    out += (j ? ", " : "") + pipeline::factor_name(j) + " " + exact_number(loadings(j));
  return out;
}

}  // namespace

std::string residuals_description(engine::ScoreMethod method) {
  return "residual (specific) returns: return - mean - loadings . factor returns, with " +
         pipeline::factor_returns_description(method);
}

std::string residuals_csv(const pipeline::AssetResidualAnswer& a) {
  const pipeline::AssetResiduals& r = a.residuals;
  std::string out = csv_caution_line();
  // The heading is one '#' line: a name stored before the identifier rule is escaped there.
  out += window_csv_heading(a.window) + "; asset " + table_text(r.asset) + ": mean " + exact_number(r.mean) +
         ", loadings " +
         loadings_text(r.loadings) + ", specific variance " + exact_number(r.specific_variance) + "; method " +
         engine::to_string(r.method) + ", " + residuals_description(r.method) + " under the window's served factors (" +
         pipeline::factor_basis_text(a.window) + ")";
  if (a.window.window.stale) out += "; STALE: returns in this window changed since it was fitted";
  if (!a.window.note.empty()) out += "; note: " + a.window.note;
  out += "\ndate,residual\n";
  for (std::size_t t = 0; t < r.dates.size(); ++t) {
    out += r.dates[t].iso() + ",";
    out += csv_number(r.residuals(static_cast<Eigen::Index>(t)));
    out += '\n';
  }
  return out;
}

ordered_json residuals_json(const pipeline::AssetResidualAnswer& a) {
  const pipeline::AssetResiduals& r = a.residuals;
  ordered_json j = window_json_heading(a.window);
  j["stale"] = a.window.window.stale;
  if (!a.window.note.empty()) j["note"] = a.window.note;
  j["asset"] = r.asset;
  j["method"] = engine::to_string(r.method);
  j["description"] = residuals_description(r.method) + " under the window's served factors";
  j["factor_basis"] = pipeline::factor_basis_text(a.window);
  j["mean"] = r.mean;
  j["loadings"] = numbers_json(r.loadings);
  j["specific_variance"] = r.specific_variance;
  j["specific_volatility"] = std::sqrt(r.specific_variance);
  ordered_json rows = ordered_json::array();
  for (std::size_t t = 0; t < r.dates.size(); ++t)
    rows.push_back({{"date", r.dates[t]}, {"residual", json_number(r.residuals(static_cast<Eigen::Index>(t)))}});
  j["residuals"] = std::move(rows);
  return j;
}

std::string residuals_table(const pipeline::AssetResidualAnswer& a) {
  const pipeline::AssetResiduals& r = a.residuals;
  const pipeline::SelectedWindow& w = a.window;
  char line[256];
  std::snprintf(line, sizeof line, "model %s, version %d: window %s .. %s, asset %s, method %s%s\n",
                w.model.name.c_str(), w.model.version, w.window.first_date.iso().c_str(), w.window.as_of.iso().c_str(),
                table_text(r.asset).c_str(), engine::to_string(r.method),
                w.window.stale ? "; STALE, run factorwatch refresh" : "");
  std::string out = line;
  if (!w.note.empty()) out += "note: " + w.note + "\n";
  out += residuals_description(r.method) + "\nunder the window's served factors (" + pipeline::factor_basis_text(w) + ")\n";
  std::snprintf(line, sizeof line, "mean %+.6f, specific variance %.4e (volatility %.3f%% per period), loadings",
                r.mean, r.specific_variance, 100 * std::sqrt(r.specific_variance));
  out += line;
  for (Eigen::Index j = 0; j < r.loadings.size(); ++j) {
    std::snprintf(line, sizeof line, "%s %s %+.6f", j ? "," : "", pipeline::factor_name(j).c_str(), r.loadings(j));
    out += line;
  }
  out += "\n\ndate          residual\n";
  double sum = 0;
  long long observed = 0;
  for (std::size_t t = 0; t < r.dates.size(); ++t) {
    const double e = r.residuals(static_cast<Eigen::Index>(t));
    if (std::isfinite(e)) {
      std::snprintf(line, sizeof line, "%-10s  %+9.4f%%\n", r.dates[t].iso().c_str(), 100 * e);
      sum += e;
      ++observed;
    } else {
      std::snprintf(line, sizeof line, "%-10s  %9s   (no return, or the date was not scored)\n", r.dates[t].iso().c_str(), "-");
    }
    out += line;
  }
  // The sample standard deviation next to the model's specific volatility: a quick look at
  // whether the residuals are as large as the window says (Bartlett's run a little smaller,
  // since L f absorbs part of e).
  if (observed > 1) {
    const double mean = sum / static_cast<double>(observed);
    double squares = 0;  // about the mean, a second pass (no cancellation)
    for (Eigen::Index t = 0; t < r.residuals.size(); ++t)
      if (std::isfinite(r.residuals(t))) squares += (r.residuals(t) - mean) * (r.residuals(t) - mean);
    const double sd = std::sqrt(squares / static_cast<double>(observed - 1));
    std::snprintf(line, sizeof line,
                  "\n%lld of %zu dates with a residual: mean %+.4f%%, standard deviation %.4f%% (the window's specific "
                  "volatility: %.4f%%)\n",
                  observed, r.dates.size(), 100 * mean, 100 * sd, 100 * std::sqrt(r.specific_variance));
    out += line;
  }
  return out;
}

}  // namespace factorwatch::server
