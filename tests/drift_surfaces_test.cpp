// The drift surfaces of the command line end to end, through the built `factorwatch`:
// model options (rotation, alignment, alert thresholds) set and shown, the refresh's
// alignment summary, `windows` with the alignment, `drift` (every window, and one window
// asset by asset), `history` and `alerts`, in their three formats, with the caution.
//
// Data: planted structure (invented numbers, tests/simulated_model.h). Two halves of one
// planted 2-factor model; in the second half the loadings of factor 2 are replaced by an
// independent column (the draws of a second planted model), so the factor the data move
// along changes abruptly on one date and nothing else does.
#include <gtest/gtest.h>

#include <cmath>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>
#include <regex>
#include <set>
#include <sstream>

#include "csv_text.h"
#include "factorwatch/engine/caution.h"
#include "simulated_model.h"
#include "storage_fixtures.h"

namespace {

namespace fw = factorwatch::testing;
using nlohmann::json;
using nlohmann::ordered_json;

constexpr int kDates = 300, kAssets = 40, kChange = 150;  // the loadings change on date index 150
constexpr int kWindow = 60, kStep = 5;

// The planted panel. First half: returns of the planted model as drawn. Second half: the
// same factor draws, specific draws and factor-1 loadings, factor 2's loadings replaced by
// another planted model's column. Both loading columns are scaled by 3 so that a 60-date
// window estimates them well: the sampling error of a loading is about sqrt(psi / T)
// = 0.014 / sqrt(60) = 0.0018 against loadings of about 0.02, which keeps the congruence
// of two windows of the same loadings near 0.99 (Tucker congruence of L + E with L is
// about 1 - |E|^2 / (2 |L|^2)): far above the alert threshold 0.95 before the change.
fw::PlantedModel planted_with_a_change(std::string& change_date) {
  fw::PlantedModel m = fw::simulate_planted_model(kDates, kAssets, 2, 20261202u);
  const fw::PlantedModel other = fw::simulate_planted_model(kDates, kAssets, 2, 777u);
  const double scale = 3;
  Eigen::MatrixXd before = scale * m.loadings, after = before;
  after.col(1) = scale * other.loadings.col(1);
  for (int t = 0; t < kDates; ++t) {
    const Eigen::MatrixXd& l = t < kChange ? before : after;
    // panel = mean + L f + e, so panel + (l - L) f = mean + l f + e.
    m.panel.values.row(t) += ((l - m.loadings) * m.factors.row(t).transpose()).transpose();
  }
  m.panel.dates = fw::business_dates(kDates);
  change_date = m.panel.dates[kChange].iso();
  return m;
}

using fw::csv_fields;
using fw::lines_of;

const std::string kCautionLine = std::string("# caution: ") + factorwatch::engine::kCaution;

// Every test reads the same refreshed model: loading, fitting and aligning once.
class DriftSurfaces : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = std::make_unique<fw::TempDir>();
    const fw::PlantedModel m = planted_with_a_change(change_date_);
    fw::write_long_csv(dir_->file("returns.csv"), m.panel);
    load_status_ = fw::run_factorwatch(dir_->path(), "load '" + dir_->file("returns.csv") + "'").status;
    // The thresholds are given (not left to the defaults, which may be retuned): 0.95 is
    // the upper band of Lorenzo-Seva and ten Berge (2006), "the same factor" at or above;
    // 0.85 their lower band, "not the same factor" below.
    define_ = fw::run_factorwatch(dir_->path(), "model set m --method ml --factors 2 --window " +
                                                    std::to_string(kWindow) + " --step " + std::to_string(kStep) +
                                                    " --alert-below 0.95 --alert-below-pinned 0.85");
    refresh_ = fw::run_factorwatch(dir_->path(), "refresh m");
  }
  static void TearDownTestSuite() { dir_.reset(); }

  void SetUp() override {
    ASSERT_EQ(load_status_, 0);
    ASSERT_EQ(define_.status, 0) << define_.err;
    ASSERT_EQ(refresh_.status, 0) << refresh_.err << refresh_.out;
  }

  static fw::CommandResult run(const std::string& arguments) { return fw::run_factorwatch(dir_->path(), arguments); }
  static ordered_json json_of(const std::string& arguments) {
    const auto r = run(arguments);
    EXPECT_EQ(r.status, 0) << arguments << ": " << r.err;
    return ordered_json::parse(r.out);
  }
  static std::vector<std::string> window_dates() {
    std::vector<std::string> out;
    const ordered_json windows = json_of("windows m --format json");
    for (const auto& w : windows["windows"]) out.push_back(w["as_of"]);
    return out;
  }

  static std::unique_ptr<fw::TempDir> dir_;
  static std::string change_date_;
  static int load_status_;
  static fw::CommandResult define_, refresh_;
};

std::unique_ptr<fw::TempDir> DriftSurfaces::dir_;
std::string DriftSurfaces::change_date_;
int DriftSurfaces::load_status_ = -1;
fw::CommandResult DriftSurfaces::define_, DriftSurfaces::refresh_;

TEST_F(DriftSurfaces, ModelOptionsRoundTripThroughSetAndShow) {
  auto r = run("model set opts --factors 3 --window 80 --rotation promax --kaiser-normalize no --align-to smoothed "
               "--pinned-window 2021-03-01 --smoothing-half-life 12.5 --min-shared-assets 25 --alert-below 0.9 "
               "--alert-below-pinned 0.8");
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("rotation:      promax (without Kaiser normalisation)"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("a smoothed reference, half-life 12.5 windows, with at least 25 shared assets"), std::string::npos)
      << r.out;
  EXPECT_NE(r.out.find("pinned window: 2021-03-01"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("against the previous window congruence below 0.9; against the pinned window congruence below 0.8"),
            std::string::npos)
      << r.out;
  json c = json::parse(run("model show opts --format json").out)["configuration"];
  EXPECT_EQ(c["rotation"], "promax");
  EXPECT_EQ(c["kaiser_normalize"], false);
  EXPECT_EQ(c["align_to"], "smoothed");
  EXPECT_EQ(c["pinned_window"], "2021-03-01");
  EXPECT_EQ(c["smoothing_half_life"], 12.5);
  EXPECT_EQ(c["min_shared_assets"], 25);
  EXPECT_EQ(c["alert_below"], 0.9);
  EXPECT_EQ(c["alert_below_pinned"], 0.8);
  // The table says the same.
  r = run("model show opts");
  EXPECT_NE(r.out.find("pinned window: 2021-03-01"), std::string::npos) << r.out;

  // Changing some keeps the others; 'first' and 0 go back to the first window and no alert.
  r = run("model set opts --rotation varimax --kaiser-normalize yes --pinned-window first --alert-below-pinned 0");
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("new version 2"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("against the pinned window off"), std::string::npos) << r.out;
  c = json::parse(run("model show opts --format json").out)["configuration"];
  EXPECT_EQ(c["rotation"], "varimax");
  EXPECT_EQ(c["kaiser_normalize"], true);
  EXPECT_EQ(c["pinned_window"], "");
  EXPECT_EQ(c["alert_below_pinned"], 0);
  EXPECT_EQ(c["align_to"], "smoothed");
  EXPECT_EQ(c["min_shared_assets"], 25);

  // Bad values are refused, naming the option, and change nothing.
  for (const std::string bad : {"--rotation sideways", "--align-to nowhere", "--kaiser-normalize maybe",
                                "--pinned-window 2021-02-30", "--alert-below 1.5", "--min-shared-assets 0",
                                "--smoothing-half-life 0"}) {
    r = run("model set opts " + bad);
    EXPECT_EQ(r.status, 2) << bad;
    EXPECT_NE(r.err.find(bad.substr(0, bad.find(' '))), std::string::npos) << bad << ": " << r.err;
  }
  EXPECT_EQ(json::parse(run("model show opts --format json").out)["version"], 2);
}

TEST_F(DriftSurfaces, RefreshReportsTheAlignmentAndWindowsShowIt) {
  EXPECT_TRUE(std::regex_search(refresh_.out, std::regex(R"(\n  49 windows aligned, [1-9][0-9]* drift alerts? raised)")))
      << refresh_.out;  // (300 - 60) / 5 + 1 windows
  EXPECT_NE(refresh_.out.find(factorwatch::engine::kCaution), std::string::npos);

  const ordered_json windows = json_of("windows m --format json");
  ASSERT_EQ(windows["windows"].size(), 49u);
  EXPECT_EQ(windows["windows"][0]["alignment"], "no reference");
  EXPECT_TRUE(windows["windows"][0]["alignment_residual"].is_null());
  for (std::size_t i = 1; i < windows["windows"].size(); ++i) {
    const auto& w = windows["windows"][i];
    EXPECT_EQ(w["alignment"], "aligned") << w["as_of"];
    // The relative Procrustes residual ||A R - B|| / ||B|| is at least 0; below 1 the
    // aligned window fits its reference better than no loadings at all would. Windows
    // sharing 55 of their 60 dates are far below 1 (measured 0.016 to 0.52, the largest
    // where the planted factor 2 switches).
    ASSERT_TRUE(w["alignment_residual"].is_number()) << w["as_of"];
    EXPECT_GE(w["alignment_residual"].get<double>(), 0.0);
    EXPECT_LT(w["alignment_residual"].get<double>(), 1.0);
  }
  const auto csv = lines_of(run("windows m --format csv").out);
  ASSERT_EQ(csv.size(), 51u);
  EXPECT_EQ(csv[0], kCautionLine);
  const auto header = csv_fields(csv[1]);
  // The reason a window is not usable comes last (issue 16), after the alignment.
  EXPECT_EQ(header[header.size() - 3], "alignment");
  EXPECT_EQ(header[header.size() - 2], "alignment_residual");
  EXPECT_EQ(header.back(), "reason");
  const auto first = csv_fields(csv[2]);
  EXPECT_EQ(first[first.size() - 2], "");  // the first window: no residual
  EXPECT_EQ(first.back(), "");             // usable: no reason
  EXPECT_NE(run("windows m").out.find("no reference"), std::string::npos);
}

TEST_F(DriftSurfaces, DriftRowsForEveryWindowAfterTheFirstInEveryFormat) {
  const std::vector<std::string> dates = window_dates();
  const ordered_json drift = json_of("drift m --format json");
  EXPECT_EQ(drift.begin().key(), "caution");
  EXPECT_EQ(drift["caution"], factorwatch::engine::kCaution);
  EXPECT_EQ(drift["factors"], 2);
  EXPECT_EQ(drift["thresholds"]["previous"], 0.95);
  EXPECT_EQ(drift["thresholds"]["pinned"], 0.85);
  std::map<std::pair<std::string, std::string>, ordered_json> rows;
  for (const auto& r : drift["rows"]) rows[{r["as_of"], r["against"]}] = r;
  EXPECT_EQ(rows.size(), drift["rows"].size()) << "one row per window and comparison";
  for (std::size_t i = 1; i < dates.size(); ++i) {
    for (const std::string against : {"previous", "pinned"}) {
      const auto it = rows.find({dates[i], against});
      ASSERT_NE(it, rows.end()) << dates[i] << " " << against;
      const ordered_json& r = it->second;
      EXPECT_EQ(r["against_as_of"], against == "previous" ? dates[i - 1] : dates[0]);
      EXPECT_EQ(r["status"], "compared");
      EXPECT_EQ(r["shared_assets"], kAssets);
      ASSERT_EQ(r["congruence"].size(), 2u);
      for (const auto& c : r["congruence"]) {
        ASSERT_TRUE(c.is_number());
        // A cosine (Cauchy-Schwarz); the 1e-12 allows for the rounding of the sums.
        EXPECT_LE(std::abs(c.get<double>()), 1 + 1e-12);
      }
      ASSERT_EQ(r["principal_angles_degrees"].size(), 2u);
      EXPECT_LE(r["principal_angles_degrees"][0].get<double>(), r["principal_angles_degrees"][1].get<double>());
      for (const auto& a : r["principal_angles_degrees"]) {
        EXPECT_GE(a.get<double>(), 0.0);
        EXPECT_LE(a.get<double>(), 90.0);
      }
    }
  }
  EXPECT_EQ(rows.count({dates[0], "previous"}) + rows.count({dates[0], "pinned"}), 0u) << "nothing before the first";

  // CSV: the caution, one header row, the same rows with the same numbers.
  const auto csv = lines_of(run("drift m --format csv").out);
  ASSERT_GE(csv.size(), 2u);
  EXPECT_EQ(csv[0], kCautionLine);
  const auto header = csv_fields(csv[1]);
  const std::vector<std::string> expected = {"as_of", "against", "against_as_of", "status", "shared_assets",
                                             "congruence_f1", "congruence_f2", "angle_1_degrees", "angle_2_degrees",
                                             "factor_variance_change_f1", "factor_variance_change_f2",
                                             "explained_share_change_f1", "explained_share_change_f2",
                                             "mean_exposure_change", "mean_communality_change", "flagged"};
  EXPECT_EQ(header, expected);
  ASSERT_EQ(csv.size() - 2, drift["rows"].size());
  for (std::size_t i = 2; i < csv.size(); ++i) {
    const auto f = csv_fields(csv[i]);
    ASSERT_EQ(f.size(), header.size()) << csv[i];
    const ordered_json& r = drift["rows"][i - 2];
    EXPECT_EQ(f[0], r["as_of"]);
    EXPECT_EQ(f[1], r["against"]);
    // Exact numbers both ways: the shortest text that reads back to the same double.
    EXPECT_EQ(std::stod(f[5]), r["congruence"][0].get<double>());
    EXPECT_EQ(std::stod(f[8]), r["principal_angles_degrees"][1].get<double>());
    EXPECT_EQ(std::stod(f[13]), r["mean_exposure_change"].get<double>());
  }
  // --against and --from/--to select.
  const ordered_json pinned = json_of("drift m --format json --against pinned --from " + dates[10] + " --to " + dates[20]);
  EXPECT_EQ(pinned["rows"].size(), 11u);
  for (const auto& r : pinned["rows"]) EXPECT_EQ(r["against"], "pinned");
  const auto table = run("drift m");
  EXPECT_EQ(table.status, 0);
  EXPECT_NE(table.out.find(factorwatch::engine::kCaution), std::string::npos);
}

// The planted change: no alert before it, and the first alerts on factor 2, within a
// window's length after it (a rolling window sees a change once it holds dates after it).
TEST_F(DriftSurfaces, APlantedChangeRaisesAnAlertOnItsFactorNearTheChange) {
  const ordered_json alerts = json_of("alerts m --format json");
  EXPECT_EQ(alerts.begin().key(), "caution");
  ASSERT_FALSE(alerts["alerts"].empty()) << run("drift m").out;
  const std::vector<std::string> dates = factorwatch::testing::iso_texts(fw::business_dates(kDates));
  const std::string window_after = dates[kChange + kWindow];
  std::string first = alerts["alerts"][0]["as_of"];
  for (const auto& a : alerts["alerts"]) {
    EXPECT_GE(a["as_of"].get<std::string>(), change_date_) << "an alert before the change: " << a.dump();
    first = std::min(first, a["as_of"].get<std::string>());
  }
  EXPECT_LE(first, window_after);
  std::set<std::string> first_factors;
  for (const auto& a : alerts["alerts"])
    if (a["as_of"] == first) first_factors.insert(a["factor"]);
  EXPECT_TRUE(first_factors.count("f2")) << alerts.dump(1);
  // Factor 1 (the same loadings throughout) is never flagged against the previous window.
  for (const auto& a : alerts["alerts"])
    if (a["against"] == "previous") {
      EXPECT_EQ(a["factor"], "f2") << a.dump();
    }
  for (const auto& a : alerts["alerts"]) {
    EXPECT_LT(a["congruence"].get<double>(), a["threshold"].get<double>());
    EXPECT_EQ(a["threshold"], a["against"] == "previous" ? 0.95 : 0.85);
    EXPECT_FALSE(a["moved_most"].empty());
  }

  // The drift series flags the same factor at the alerts' windows.
  const ordered_json drift = json_of("drift m --format json --from " + first + " --to " + first);
  bool flagged = false;
  for (const auto& r : drift["rows"])
    for (const auto& f : r["flagged"]) flagged |= f == "f2";
  EXPECT_TRUE(flagged) << drift.dump(1);
}

TEST_F(DriftSurfaces, AlertsCsvParsesAndMatchesTheJson) {
  const ordered_json alerts = json_of("alerts m --format json");
  const auto csv = lines_of(run("alerts m --format csv").out);
  ASSERT_GE(csv.size(), 2u);
  EXPECT_EQ(csv[0], kCautionLine);
  const std::vector<std::string> header = {"as_of", "against", "against_as_of", "factor", "congruence", "threshold",
                                           "moved_most"};
  EXPECT_EQ(csv_fields(csv[1]), header);
  ASSERT_EQ(csv.size() - 2, alerts["alerts"].size());
  const std::regex mover(R"(P1[0-9]{3} \([+-][0-9]+\.[0-9]{3}\))");
  for (std::size_t i = 2; i < csv.size(); ++i) {
    const auto f = csv_fields(csv[i]);
    ASSERT_EQ(f.size(), header.size()) << csv[i];
    const ordered_json& a = alerts["alerts"][i - 2];
    EXPECT_EQ(f[0], a["as_of"]);
    EXPECT_EQ(f[3], a["factor"]);
    EXPECT_EQ(std::stod(f[4]), a["congruence"].get<double>());
    // The five assets that moved most, "asset (change)" joined by "; ", in the JSON's order.
    std::vector<std::string> names;
    std::size_t start = 0;
    while (start < f[6].size()) {
      std::size_t end = f[6].find("; ", start);
      if (end == std::string::npos) end = f[6].size();
      const std::string item = f[6].substr(start, end - start);
      EXPECT_TRUE(std::regex_match(item, mover)) << item;
      names.push_back(item.substr(0, item.find(' ')));
      start = end + 2;
    }
    ASSERT_EQ(names.size(), std::min<std::size_t>(5, a["moved_most"].size()));
    for (std::size_t m = 0; m < names.size(); ++m) EXPECT_EQ(names[m], a["moved_most"][m]["asset"]);
  }
  const auto table = run("alerts m");
  EXPECT_NE(table.out.find("f2"), std::string::npos);
  EXPECT_NE(table.out.find(factorwatch::engine::kCaution), std::string::npos);
}

// One window asset by asset: every shared asset, largest standardized change first, its
// heading the stored comparison, and the assets the alert named at the top of the factor.
TEST_F(DriftSurfaces, OneWindowAssetByAsset) {
  const ordered_json alerts = json_of("alerts m --format json");
  ASSERT_FALSE(alerts["alerts"].empty());
  const ordered_json& alert = alerts["alerts"][0];
  const std::string as_of = alert["as_of"], against = alert["against"];
  const ordered_json w = json_of("drift m --window " + as_of + " --against " + against + " --format json");
  EXPECT_EQ(w.begin().key(), "caution");
  EXPECT_EQ(w["as_of"], as_of);
  EXPECT_EQ(w["against_as_of"], alert["against_as_of"]);
  ASSERT_EQ(w["assets"].size(), static_cast<std::size_t>(kAssets));
  const ordered_json series = json_of("drift m --format json --against " + against + " --from " + as_of + " --to " + as_of);
  ASSERT_EQ(series["rows"].size(), 1u);
  EXPECT_EQ(w["congruence"], series["rows"][0]["congruence"]);
  EXPECT_EQ(w["principal_angles_degrees"], series["rows"][0]["principal_angles_degrees"]);

  double last = INFINITY;
  std::string top_on_factor;
  double top_change = -1;
  const int factor = std::stoi(alert["factor"].get<std::string>().substr(1)) - 1;
  for (const auto& a : w["assets"]) {
    const double norm = a["standardized_change_norm"];
    EXPECT_LE(norm, last);
    last = norm;
    double squares = 0;
    for (const auto& z : a["standardized_change"]) squares += z.get<double>() * z.get<double>();
    EXPECT_NEAR(norm, std::sqrt(squares), 1e-15 * (1 + norm));  // the same sum, rounding only
    const double on_factor = std::abs(a["standardized_change"][factor].get<double>());
    if (on_factor > top_change) top_change = on_factor, top_on_factor = a["asset"];
  }
  // The refresh kept the movers from the comparison it made; the full comparison recomputed
  // from the stored windows ranks the same asset first. Relative 1e-12: the same products
  // from the same stored doubles, evaluated in another order at most.
  EXPECT_EQ(alert["moved_most"][0]["asset"], top_on_factor);
  EXPECT_NEAR(std::abs(alert["moved_most"][0]["standardized_change"].get<double>()), top_change, 1e-12 * top_change);

  const auto csv = lines_of(run("drift m --window " + as_of + " --against " + against + " --format csv").out);
  ASSERT_EQ(csv.size(), 4u + kAssets);
  EXPECT_EQ(csv[0], kCautionLine);
  EXPECT_EQ(csv[1].rfind("# model m version 1, window as of " + as_of + " against the " + against + " window", 0), 0u)
      << csv[1];
  EXPECT_EQ(csv[2].rfind("# congruence f1 ", 0), 0u) << csv[2];
  EXPECT_EQ(csv[3], "asset,exposure_change_f1,exposure_change_f2,standardized_change_f1,standardized_change_f2,"
                    "standardized_change_norm,communality_change");
  EXPECT_EQ(csv_fields(csv[4])[0], w["assets"][0]["asset"]);

  // The first window has nothing before it: exit 1 with the reason; both comparisons at
  // once is not a one-window question: exit 2.
  const auto first = run("drift m --window " + window_dates().front());
  EXPECT_EQ(first.status, 1);
  EXPECT_NE(first.err.find("no usable previous window"), std::string::npos) << first.err;
  const auto both = run("drift m --window " + as_of + " --against both");
  EXPECT_EQ(both.status, 2);
  EXPECT_NE(both.err.find("--against"), std::string::npos) << both.err;
}

// The history of an asset is what `exposures` serves for it at each window. Relative
// 1e-12: history applies the rotation and alignment to the asset's row, exposures to the
// whole matrix; the same products, possibly summed in another order (a few ulps).
TEST_F(DriftSurfaces, HistoryEqualsTheExposuresOfEachWindow) {
  const std::string asset = "P1007";
  const ordered_json h = json_of("history m " + asset + " --format json");
  EXPECT_EQ(h.begin().key(), "caution");
  const std::vector<std::string> dates = window_dates();
  ASSERT_EQ(h["windows"].size(), dates.size());
  for (std::size_t i = 0; i < dates.size(); ++i) {
    const ordered_json& p = h["windows"][i];
    EXPECT_EQ(p["as_of"], dates[i]);
    ASSERT_EQ(p["present"], true);
    const ordered_json e = json_of("exposures m --as-of " + dates[i] + " --assets " + asset + " --format json");
    ASSERT_EQ(e["assets"].size(), 1u);
    const ordered_json& row = e["assets"][0];
    ASSERT_EQ(p["exposures"].size(), row["loadings"].size());
    for (std::size_t j = 0; j < row["loadings"].size(); ++j) {
      const double x = p["exposures"][j], y = row["loadings"][j];
      EXPECT_NEAR(x, y, 1e-12 * std::abs(y)) << dates[i] << " f" << j + 1;
    }
    EXPECT_EQ(p["communality"], row["communality"]);
    EXPECT_EQ(p["specific_variance"], row["specific_variance"]);
    EXPECT_EQ(p["specific_volatility"].get<double>(), std::sqrt(row["specific_variance"].get<double>()));
  }
  // CSV: the caution, one header row, a row per window.
  const auto csv = lines_of(run("history m " + asset + " --format csv").out);
  ASSERT_EQ(csv.size(), dates.size() + 2);
  EXPECT_EQ(csv[0], kCautionLine);
  EXPECT_EQ(csv[1], "as_of,present,exposure_f1,exposure_f2,communality,specific_variance,specific_volatility,alignment");
  EXPECT_EQ(csv_fields(csv[2]).back(), "no reference");
  EXPECT_EQ(csv_fields(csv[3]).back(), "aligned");
  // A range, and an unknown asset (exit 2, named).
  EXPECT_EQ(json_of("history m " + asset + " --format json --from " + dates[5] + " --to " + dates[7])["windows"].size(), 3u);
  const auto unknown = run("history m NOPE");
  EXPECT_EQ(unknown.status, 2);
  EXPECT_NE(unknown.err.find("asset 'NOPE'"), std::string::npos) << unknown.err;
  EXPECT_NE(run("history m " + asset).out.find(factorwatch::engine::kCaution), std::string::npos);
}

TEST_F(DriftSurfaces, BadInputNamesTheOptionAndExitsTwo) {
  struct Case {
    std::string arguments, words;
  };
  for (const Case& c : std::vector<Case>{{"drift m --from 2021-02-30", "option '--from' = '2021-02-30'"},
                                         {"drift m --to soon", "option '--to' = 'soon'"},
                                         {"drift m --from 2021-06-01 --to 2021-05-01", "option '--to'"},
                                         {"drift nope", "no model named 'nope'"},
                                         {"alerts m --from 2021-13-01", "option '--from'"},
                                         {"alerts nope", "no model named 'nope'"},
                                         {"history nope P1001", "no model named 'nope'"},
                                         {"history m P1001 --to 2021-00-10", "option '--to'"},
                                         {"drift m --window yesterday", "option '--window' = 'yesterday'"},
                                         {"drift m --window 2021-06-01 --from 2021-05-01", "--window"}}) {
    const auto r = run(c.arguments);
    EXPECT_EQ(r.status, 2) << c.arguments;
    EXPECT_NE(r.err.find(c.words), std::string::npos) << c.arguments << ": " << r.err;
    EXPECT_TRUE(r.out.empty()) << c.arguments;
  }
  // A window before the first: nothing stored yet (exit 1), with the command that fits it.
  const auto early = run("drift m --window 2020-01-01");
  EXPECT_EQ(early.status, 1);
  EXPECT_NE(early.err.find("factorwatch refresh m"), std::string::npos) << early.err;
}

}  // namespace

namespace {

// Rotated models serve their loadings in the rotated and aligned basis and say so; with
// correlated (promax) factors the factor covariance and the structure matrix come along.
TEST_F(DriftSurfaces, ExposuresNameTheRotationAndCarryTheFactorCovariance) {
  for (const std::string rotation : {"varimax", "promax"}) {
    SCOPED_TRACE(rotation);
    const std::string model = "rot-" + rotation;
    ASSERT_EQ(run("model set " + model + " --method ml --factors 2 --window " + std::to_string(kWindow) + " --step " +
                  std::to_string(kStep) + " --rotation " + rotation).status, 0);
    ASSERT_EQ(run("refresh " + model).status, 0);
    const ordered_json e = json_of("exposures " + model + " --format json");
    EXPECT_EQ(e["rotation"], rotation);
    EXPECT_EQ(e["alignment"]["status"], "aligned");
    EXPECT_EQ(e["alignment"]["reference"], "previous");
    const ordered_json& phi = e["factor_covariance"];
    ASSERT_EQ(phi.size(), 2u);
    EXPECT_NEAR(phi[0][1].get<double>(), phi[1][0].get<double>(), 1e-15);
    const ordered_json& row = e["assets"][0];
    const auto csv = lines_of(run("exposures " + model + " --format csv").out);
    ASSERT_GE(csv.size(), 3u);
    EXPECT_NE(csv[1].find("rotation " + rotation + ", aligned onto "), std::string::npos) << csv[1];
    if (rotation == "varimax") {
      // Orthogonal factors stay orthogonal through an orthogonal alignment (to rounding).
      EXPECT_NEAR(phi[0][1].get<double>(), 0.0, 1e-12);
      EXPECT_FALSE(row.contains("structure"));
      EXPECT_EQ(csv[2], "asset,f1,f2,communality,specific_variance,uniqueness,heywood");
    } else {
      EXPECT_GT(std::abs(phi[0][1].get<double>()), 1e-6);  // promax factors correlate
      ASSERT_TRUE(row.contains("structure"));
      // Structure = pattern x factor covariance, as served.
      for (int j = 0; j < 2; ++j) {
        const double expected = row["loadings"][0].get<double>() * phi[0][j].get<double>() +
                                row["loadings"][1].get<double>() * phi[1][j].get<double>();
        EXPECT_NEAR(row["structure"][j].get<double>(), expected, 1e-15);
      }
      EXPECT_EQ(csv[2], "asset,f1,f2,communality,specific_variance,uniqueness,heywood,structure_f1,structure_f2");
    }
  }
}

}  // namespace
