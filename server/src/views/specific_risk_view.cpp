#include "specific_risk_view.h"

#include <cmath>

#include "text_format.h"
#include "window_heading.h"

namespace factorwatch::server {

std::vector<SpecificRiskRow> specific_risk_rows(const pipeline::SelectedWindow& s, const engine::Frequency& frequency) {
  const engine::FactorFit& f = s.window.fit;
  const double annual = std::sqrt(static_cast<double>(frequency.periods_per_year));
  std::vector<SpecificRiskRow> rows;
  rows.reserve(s.rows.size());
  for (std::size_t i : s.rows) {
    const auto r = static_cast<Eigen::Index>(i);
    const double psi = f.specific_variance(r);
    const double total = (f.loadings.row(r) * f.factor_covariance * f.loadings.row(r).transpose())(0, 0) + psi;
    rows.push_back({f.assets[i], psi, std::sqrt(psi), std::sqrt(psi) * annual, total, std::sqrt(total) * annual,
                    psi / total, static_cast<bool>(f.heywood[i])});
  }
  return rows;
}

std::string specific_risk_csv(const pipeline::SelectedWindow& s) {
  const engine::Frequency frequency = pipeline::window_frequency(s);
  std::string out = csv_caution_line();
  out += window_csv_heading(s) + ", " + frequency.name + " data, annualised by sqrt(" +
         std::to_string(frequency.periods_per_year) + ")\n";
  out += "asset,specific_variance,specific_volatility,specific_volatility_annual,total_variance,"
         "total_volatility_annual,specific_share,heywood\n";
  for (const SpecificRiskRow& r : specific_risk_rows(s, frequency)) {
    out += csv_field(r.asset);
    for (double x : {r.specific_variance, r.specific_volatility, r.specific_volatility_annual, r.total_variance,
                     r.total_volatility_annual, r.specific_share}) {
      out += ',';
      append_exact_number(out, x);
    }
    out += r.heywood ? ",true\n" : ",false\n";
  }
  return out;
}

nlohmann::ordered_json specific_risk_json(const pipeline::SelectedWindow& s) {
  const engine::Frequency frequency = pipeline::window_frequency(s);
  nlohmann::ordered_json j = window_json_heading(s);
  j["frequency"] = frequency.name;
  j["periods_per_year"] = frequency.periods_per_year;
  j["stale"] = s.window.stale;
  if (!s.note.empty()) j["note"] = s.note;
  nlohmann::ordered_json out = nlohmann::ordered_json::array();
  for (const SpecificRiskRow& r : specific_risk_rows(s, frequency))
    out.push_back({{"asset", r.asset},
                   {"specific_variance", r.specific_variance},
                   {"specific_volatility", r.specific_volatility},
                   {"specific_volatility_annual", r.specific_volatility_annual},
                   {"total_variance", r.total_variance},
                   {"total_volatility_annual", r.total_volatility_annual},
                   {"specific_share", r.specific_share},
                   {"heywood", r.heywood}});
  j["assets"] = std::move(out);
  j["not_in_window"] = pipeline::missing_json(s);
  return j;
}

}  // namespace factorwatch::server
