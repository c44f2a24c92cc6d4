#include "generator.h"

#include <cmath>
#include <cstdio>
#include <limits>
#include <sstream>
#include <stdexcept>

#include "demo_calendar.h"
#include "demo_planted.h"
#include "demo_random_stream.h"

namespace factorwatch::demo {
namespace {

std::string asset_id(int index, int count) {
  // At least four digits; wider only when the universe needs it.
  int width = 4;
  for (int limit = 10000; count >= limit && width < 9; limit *= 10) ++width;
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "ZQ-%0*d", width, index + 1);
  return buffer;
}

template <typename T>
bool fail(std::string* error, const char* field, T value, const char* rule) {
  if (error) {
    std::ostringstream out;
    out << field << " = " << value << ": " << rule;
    *error = out.str();
  }
  return false;
}

int resolved_change_day(const DemoOptions& o, int periods) {
  return o.change_day >= 0 ? o.change_day : periods * 3 / 5;  // integer: no rounding surprises
}

}  // namespace

bool DemoOptions::IsValid(std::string* error) const {
  if (assets < 20 || assets > 1000000) return fail(error, "assets", assets, "must be in 20..1000000");
  if (years < 1 || years > 100) return fail(error, "years", years, "must be in 1..100");
  if (factors < 2 || factors > assets / 5) {
    return fail(error, "factors", factors, "must be at least 2 and leave 5 assets per cluster (assets / 5)");
  }
  if (moving_factor < 2 || moving_factor > factors) {
    return fail(error, "moving_factor", moving_factor, "must be in 2..factors (f1 is the market factor)");
  }
  const auto start = engine::Date::from_iso(start_date);
  if (!start) return fail(error, "start_date", '"' + start_date + '"', "must be a real date as yyyy-mm-dd");
  if (start->key() / 10000 > 9000) return fail(error, "start_date", start_date, "year must be in 1..9000");
  const int periods = static_cast<int>(business_days(*start, years).size());
  if (change_day != -1 && (change_day < 1 || change_day >= periods)) {
    std::string rule = "must be -1 (60% through) or in 1.." + std::to_string(periods - 1);
    return fail(error, "change_day", change_day, rule.c_str());
  }
  if (!(gap_rate >= 0 && gap_rate < 0.5)) return fail(error, "gap_rate", gap_rate, "must be in [0, 0.5)");
  if (!(listing_share >= 0 && listing_share <= 1)) {
    return fail(error, "listing_share", listing_share, "must be in [0, 1]");
  }
  if (!(delisting_share >= 0 && delisting_share <= 1 - listing_share)) {
    return fail(error, "delisting_share", delisting_share, "must be in [0, 1 - listing_share]");
  }
  const struct {
    const char* name;
    double value;
  } positive[] = {{"market_vol", market_vol},           {"cluster_vol_high", cluster_vol_high},
                  {"cluster_vol_low", cluster_vol_low}, {"specific_vol_low", specific_vol_low},
                  {"specific_vol_high", specific_vol_high}};
  for (const auto& p : positive) {
    if (!(p.value > 0 && p.value < 1)) return fail(error, p.name, p.value, "must be in (0, 1)");
  }
  if (!(cross_loading_sd >= 0 && cross_loading_sd < 1)) {
    return fail(error, "cross_loading_sd", cross_loading_sd, "must be in [0, 1)");
  }
  if (!(specific_vol_high >= specific_vol_low)) {
    return fail(error, "specific_vol_high", specific_vol_high, "must be >= specific_vol_low");
  }
  if (!(std::isfinite(drift_low) && std::isfinite(drift_high) && drift_high >= drift_low)) {
    return fail(error, "drift_high", drift_high, "must be finite and >= drift_low");
  }
  return true;
}

DemoUniverse generate_demo_universe(const DemoOptions& options) {
  std::string error;
  if (!options.IsValid(&error)) throw std::invalid_argument("DemoOptions: " + error);

  DemoUniverse u;
  u.dates = business_days(*engine::Date::from_iso(options.start_date), options.years);
  const int periods = static_cast<int>(u.dates.size());
  const int n = options.assets;
  const int k = options.factors;
  u.options = options;
  u.options.change_day = resolved_change_day(options, periods);
  u.change_index = u.options.change_day;
  u.moving_factor = options.moving_factor;

  u.assets.reserve(n);
  for (int i = 0; i < n; ++i) u.assets.push_back(asset_id(i, n));

  PlantedModel model = plant_model(options);
  u.cluster = std::move(model.cluster);
  u.loadings_before = std::move(model.loadings_before);
  u.loadings_after = std::move(model.loadings_after);
  u.specific_variance = std::move(model.specific_variance);
  u.mean = std::move(model.mean);
  u.from_cluster = model.from_cluster;
  u.to_cluster = model.to_cluster;

  ListingCalendar listing = plant_listing(options, periods);
  u.listed_from = std::move(listing.listed_from);
  u.listed_until = std::move(listing.listed_until);

  // Plain scalar loops rather than Eigen products: Eigen's kernels may use fused
  // multiply-add on one machine and not on another, which would change last bits.
  RandomStream factor_rng(options.seed, Stream::factor_returns);
  RandomStream specific_rng(options.seed, Stream::specific_returns);
  RandomStream gap_rng(options.seed, Stream::gaps);
  std::vector<double> specific_vol(n);
  for (int i = 0; i < n; ++i) specific_vol[i] = std::sqrt(u.specific_variance(i));
  const double nan = std::numeric_limits<double>::quiet_NaN();
  std::vector<double> f(k);
  u.values.resize(periods, n);
  for (int t = 0; t < periods; ++t) {
    for (int j = 0; j < k; ++j) f[j] = factor_rng.normal();
    const Eigen::MatrixXd& loadings = t < u.change_index ? u.loadings_before : u.loadings_after;
    for (int i = 0; i < n; ++i) {
      // Draw noise and the gap coin for every cell, listed or not, so the listing
      // calendar and gap rate never shift the other assets' numbers.
      const double noise = specific_vol[i] * specific_rng.normal();
      const bool gap = gap_rng.uniform() < options.gap_rate;
      double x = u.mean(i);
      for (int j = 0; j < k; ++j) x += loadings(i, j) * f[j];
      x += noise;
      const bool listed = t >= u.listed_from[i] && t < u.listed_until[i];
      u.values(t, i) = listed && !gap ? x : nan;
    }
  }
  return u;
}

// Scalar loops again (k is tiny): the same bits on every machine, and no
// vectorised Eigen product kernels in a library that needs none.
Eigen::MatrixXd DemoUniverse::planted_covariance(bool after_change) const {
  const Eigen::MatrixXd& l = after_change ? loadings_after : loadings_before;
  const Eigen::Index n = l.rows();
  Eigen::MatrixXd sigma(n, n);
  for (Eigen::Index b = 0; b < n; ++b) {
    for (Eigen::Index a = b; a < n; ++a) {
      double s = 0;
      for (Eigen::Index j = 0; j < l.cols(); ++j) s += l(a, j) * l(b, j);
      sigma(a, b) = s;
      sigma(b, a) = s;
    }
    sigma(b, b) += specific_variance(b);
  }
  return sigma;
}

}  // namespace factorwatch::demo
