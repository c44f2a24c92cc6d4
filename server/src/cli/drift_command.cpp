#include "drift_command.h"

#include <cmath>
#include <cstdio>
#include <iostream>
#include <set>

#include "drift_selection.h"
#include "drift_view.h"
#include "factorwatch/pipeline/drift_query.h"
#include "factorwatch/pipeline/window_query.h"
#include "window_drift_view.h"

namespace factorwatch::server {
namespace {

void print_series_table(const pipeline::DriftSeries& s) {
  const storage::ModelConfig& c = s.model.config;
  const Eigen::Index k = pipeline::factor_columns(c, s.rows);
  std::printf("model %s, version %d: %zu comparison%s\n", s.model.name.c_str(), s.model.version, s.rows.size(),
              s.rows.size() == 1 ? "" : "s");
  std::printf("alerts: against the previous window %s; against the pinned window %s\n\n",
              threshold_text(c.alert_below).c_str(), threshold_text(c.alert_below_pinned).c_str());
  std::printf("%-10s  %-8s  %-13s %6s ", "as of", "against", "compared with", "shared");
  for (Eigen::Index j = 0; j < k; ++j) std::printf(" %7s ", pipeline::factor_name(j).c_str());
  std::printf(" %9s %9s\n", "max angle", "mean move");
  for (const storage::DriftRecord& r : s.rows) {
    std::printf("%-10s  %-8s  %-13s %6lld ", r.as_of.iso().c_str(), r.against.c_str(), r.against_as_of.iso().c_str(), r.shared);
    if (r.congruence.size() == 0) {
      std::printf(" %s\n", r.status.c_str());
      continue;
    }
    const auto flagged = pipeline::flagged_factors(r, pipeline::alert_threshold(c, r.against));
    const std::set<Eigen::Index> marked(flagged.begin(), flagged.end());
    for (Eigen::Index j = 0; j < k; ++j) {
      if (j < r.congruence.size()) std::printf(" %7.3f%c", r.congruence(j), marked.count(j) ? '*' : ' ');
      else std::printf(" %7s ", "-");
    }
    const double max_angle = r.principal_angles_degrees.size() ? r.principal_angles_degrees.maxCoeff<Eigen::PropagateNaN>() : NAN;  // a lost dimension (NaN angle) shows
    std::printf(" %8.2f° %9.4f\n", max_angle, r.mean_exposure_change);
  }
  if (s.rows.empty()) std::printf("(no comparisons stored in this range; factorwatch refresh %s stores them)\n", s.model.name.c_str());
  std::printf("\nf1..: Tucker's congruence of each factor's standardized loadings with the compared window's\n"
              "(1: the same factor; * flagged below the model's threshold). max angle: the largest principal\n"
              "angle between the two windows' factor spaces. mean move: mean length of the assets' standardized\n"
              "exposure change. --format csv or json adds every angle and the changes of factor variance and\n"
              "explained share; --window DATE compares one window asset by asset.\n");
  print_caution(std::cout);
}

void print_window_table(const pipeline::WindowDrift& d, int limit) {
  const storage::DriftRecord& r = d.record;
  const engine::DriftComparison& c = d.comparison;
  std::printf("model %s, version %d: %s\n", d.model.name.c_str(), d.model.version, window_drift_title(d).c_str());
  if (!d.note.empty()) std::printf("note: %s\n", d.note.c_str());
  if (!c.message.empty()) std::printf("%s\n", c.message.c_str());
  const auto flagged = pipeline::flagged_factors(r, pipeline::alert_threshold(d.model.config, r.against));
  const std::set<Eigen::Index> marked(flagged.begin(), flagged.end());
  if (r.congruence.size() > 0) {
    std::printf("\nfactor  congruence  variance change  explained share change\n");
    for (Eigen::Index j = 0; j < r.congruence.size(); ++j)
      std::printf("%-6s  %9.4f%c  %+15.4e  %+21.2f%%\n", pipeline::factor_name(j).c_str(), r.congruence(j),
                  marked.count(j) ? '*' : ' ', j < r.factor_variance_change.size() ? r.factor_variance_change(j) : NAN,
                  100 * (j < r.explained_share_change.size() ? r.explained_share_change(j) : NAN));
    std::printf("principal angles (degrees):");
    for (Eigen::Index j = 0; j < r.principal_angles_degrees.size(); ++j)
      std::printf("%s %.3f", j ? "," : "", r.principal_angles_degrees(j));
    std::printf("\n");
  }
  const Eigen::Index k = c.exposure_change.cols();
  if (!d.order.empty()) {
    std::printf("\n%-14s", "asset");
    for (Eigen::Index j = 0; j < k; ++j) std::printf(" %11s", ("d" + pipeline::factor_name(j)).c_str());
    for (Eigen::Index j = 0; j < k; ++j) std::printf(" %9s", ("z" + pipeline::factor_name(j)).c_str());
    std::printf(" %8s %13s\n", "|z|", "dcommunality");
    const std::size_t shown = limit > 0 ? std::min<std::size_t>(limit, d.order.size()) : d.order.size();
    for (std::size_t n = 0; n < shown; ++n) {
      const std::size_t i = d.order[n];
      const auto row = static_cast<Eigen::Index>(i);
      std::printf("%-14s", table_text(c.assets[i]).c_str());
      for (Eigen::Index j = 0; j < k; ++j) std::printf(" %+11.3e", c.exposure_change(row, j));
      for (Eigen::Index j = 0; j < k; ++j) std::printf(" %+9.4f", c.standardized_change(row, j));
      std::printf(" %8.4f %+13.4e\n", pipeline::standardized_norm(c, i), c.communality_change(row));
    }
    if (shown < d.order.size())
      std::printf("... %zu more; --limit 0 shows all, --format csv gives a spreadsheet file\n", d.order.size() - shown);
    std::printf("\nd: exposure change (now - then) in return units; z: the same on the correlation scale\n"
                "(each window's loadings over its asset's volatility); |z| its length, largest first;\n"
                "dcommunality: change of the variance the factors explain, squared return units.\n");
  }
  print_caution(std::cout);
}

}  // namespace

CLI::App* add_drift_command(CLI::App& app, DriftArguments& a) {
  CLI::App* command = app.add_subcommand("drift", "How each window's factors differ from the previous and the pinned window's");
  command->add_option("NAME", a.model, "Model name")->required();
  add_date_range_options(command, a.from, a.to);
  command->add_option("--against", a.against,
                      "Compare with the previous usable window, the pinned window, or both (default both; "
                      "previous with --window)")
      ->check(CLI::IsMember({"previous", "pinned", "both"}));
  command->add_option("--window", a.window,
                      "Compare this window (ending on DATE, or the latest before it) asset by asset")
      ->type_name("DATE");
  add_format_option(command, a.format);
  command->add_option("--limit", a.limit, "Table rows of a --window comparison (0: all)")->type_name("N")->capture_default_str();
  return command;
}

int run_drift_command(const DriftArguments& a, const GlobalArguments& global) {
  auto db = open_database(global, "drift");
  if (!db) return kExitFailed;
  try {
    if (!a.window.empty()) {
      if (!a.from.empty() || !a.to.empty()) {
        std::fprintf(stderr, "factorwatch drift: option '--window' compares one window; leave out --from and --to\n");
        return kExitBadInput;
      }
      std::optional<engine::Date> window;
      if (auto f = pipeline::read_date("window", a.window, window)) return report_failure("drift", *f, a.model);
      pipeline::WindowDrift d;
      if (auto f = pipeline::find_window_drift(*db, a.model, window, a.against, d)) return report_failure("drift", *f, a.model);
      if (a.format == "csv") std::cout << window_drift_csv(d);
      else if (a.format == "json") std::cout << window_drift_json(d).dump(2) << "\n";
      else print_window_table(d, a.limit);
      return kExitOk;
    }
    pipeline::RangeQuery range;
    if (auto f = read_range(a.model, a.from, a.to, range)) return report_failure("drift", *f, a.model);
    pipeline::DriftSeries s;
    if (auto f = pipeline::find_drift_series(*db, range, a.against, s))
      return report_failure("drift", *f, a.model);
    if (a.format == "csv") std::cout << drift_csv(s);
    else if (a.format == "json") std::cout << drift_json(s).dump(2) << "\n";
    else print_series_table(s);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch drift: %s\n", e.what());
    return kExitFailed;
  }
  return kExitOk;
}

}  // namespace factorwatch::server
