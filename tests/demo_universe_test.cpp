// Tests of the fictional demo universe (demo-universe/): the calendar, determinism,
// shape, the listing and gap pattern, and — the planted-structure tests — that the
// planted factor model, including its structural change, is really in the data.
// All data here is invented by the generator; nothing is market data.
#include <gtest/gtest.h>

#include <cmath>
#include <set>
#include <stdexcept>
#include <string>

#include "demo_calendar.h"
#include "generator.h"

namespace factorwatch::demo {
namespace {

// The default universe, built once: generating it takes a fraction of a second,
// but several tests read it.
const DemoUniverse& default_universe() {
  static const DemoUniverse u = generate_demo_universe(DemoOptions{});
  return u;
}

bool same_cell(double a, double b) { return (std::isnan(a) && std::isnan(b)) || a == b; }

// Tucker's congruence coefficient: cosine of the angle between two loading columns.
double congruence(const Eigen::VectorXd& a, const Eigen::VectorXd& b) {
  return a.dot(b) / (a.norm() * b.norm());
}

// Assets listed on every date of [begin, end) (scattered one-day gaps allowed).
std::vector<int> listed_throughout(const DemoUniverse& u, int begin, int end) {
  std::vector<int> keep;
  for (int i = 0; i < static_cast<int>(u.assets.size()); ++i) {
    if (u.listed_from[i] <= begin && u.listed_until[i] >= end) keep.push_back(i);
  }
  return keep;
}

// Sample covariance with pairwise deletion of the scattered gaps: each column is
// centred on its own observed mean, each pair divided by (dates both observed - 1).
// Listwise deletion is no option: at a 0.3% gap rate across ~580 assets only ~18% of
// dates are complete.
Eigen::MatrixXd pairwise_covariance(const DemoUniverse& u, int begin, int end, const std::vector<int>& cols) {
  const int t = end - begin;
  const int n = static_cast<int>(cols.size());
  Eigen::MatrixXd x = Eigen::MatrixXd::Zero(t, n);
  Eigen::MatrixXd seen = Eigen::MatrixXd::Zero(t, n);
  for (int c = 0; c < n; ++c) {
    double sum = 0;
    int count = 0;
    for (int r = 0; r < t; ++r) {
      const double v = u.values(begin + r, cols[c]);
      if (std::isnan(v)) continue;
      x(r, c) = v;
      seen(r, c) = 1;
      sum += v;
      ++count;
    }
    const double mean = sum / count;
    for (int r = 0; r < t; ++r) {
      if (seen(r, c) != 0) x(r, c) -= mean;
    }
  }
  const Eigen::MatrixXd pairs = seen.transpose() * seen;
  return (x.transpose() * x).array() / (pairs.array() - 1.0);
}

Eigen::MatrixXd restrict(const Eigen::MatrixXd& sigma, const std::vector<int>& keep) {
  const int n = static_cast<int>(keep.size());
  Eigen::MatrixXd out(n, n);
  for (int a = 0; a < n; ++a) {
    for (int b = 0; b < n; ++b) out(a, b) = sigma(keep[a], keep[b]);
  }
  return out;
}

double relative_frobenius(const Eigen::MatrixXd& estimate, const Eigen::MatrixXd& truth) {
  return (estimate - truth).norm() / truth.norm();
}

// Sampling-error tolerance for ||S - Sigma||_F / ||Sigma||_F with T Gaussian dates.
// E||S - Sigma||_F^2 = (tr(Sigma)^2 + ||Sigma||_F^2) / T (Wishart second moments:
// Var S_ij = (Sigma_ii Sigma_jj + Sigma_ij^2) / T), giving the expected squared
// relative error e0^2. Most of it is spread over ~N^2/2 entries and concentrates; the
// part that does not is the market factor's own sample variance, ||l1||^4 (w - 1)^2
// with w - 1 ~ N(0, 2/T) and ||l1||^2 close to ||Sigma||_F. Allowing that one term a
// 4-sigma excursion on top of e0^2 gives sqrt(e0^2 + 16 * 2 / T): about 0.22 for the
// default pre-change segment (T = 939), against ~0.13 typically observed.
double sampling_tolerance(const Eigen::MatrixXd& sigma, int periods) {
  const double t = periods;
  const double frob2 = sigma.squaredNorm();
  const double e0_squared = (sigma.trace() * sigma.trace() + frob2) / (t * frob2);
  return std::sqrt(e0_squared + 16.0 * 2.0 / t);
}

// The calendar is engine::Date's (its day counts are checked against numpy in
// date_key_test). Weekdays, 0 = Monday: Python's datetime.date(y, m, d).weekday().
TEST(DemoCalendar, WeekdaysMatchPythonsDatetime) {
  const struct {
    const char* date;
    int weekday;
  } cases[] = {{"2020-01-01", 2}, {"2024-02-29", 3}, {"1970-01-01", 3}, {"0001-01-01", 0}, {"9999-12-31", 4},
               {"2022-01-01", 5}};
  for (const auto& c : cases) EXPECT_EQ(engine::Date::from_iso(c.date)->weekday(), c.weekday) << c.date;
}

TEST(DemoCalendar, BusinessDaysSkipWeekendsAndStartOnOrAfter) {
  // 2022-01-01 is a Saturday: the first business day is Monday 2022-01-03.
  const auto days = business_days(*engine::Date::from_iso("2022-01-01"), 1);
  ASSERT_FALSE(days.empty());
  EXPECT_EQ(days.front().iso(), "2022-01-03");
  EXPECT_EQ(days.back().iso(), "2022-12-30");
  EXPECT_EQ(days.size(), 260u);
  // A 29 February start ends on 1 March of a common year: 2024-02-29 .. 2025-02-28.
  const auto leap = business_days(*engine::Date::from_iso("2024-02-29"), 1);
  EXPECT_EQ(leap.front().iso(), "2024-02-29");
  EXPECT_EQ(leap.back().iso(), "2025-02-28");
}

TEST(DemoOptions, MisuseThrowsNamingTheField) {
  DemoOptions o;
  o.factors = 1;
  std::string error;
  EXPECT_FALSE(o.IsValid(&error));
  EXPECT_NE(error.find("factors"), std::string::npos) << error;
  EXPECT_THROW(generate_demo_universe(o), std::invalid_argument);

  o = DemoOptions{};
  o.start_date = "2021-02-30";
  EXPECT_FALSE(o.IsValid(&error));
  EXPECT_NE(error.find("start_date"), std::string::npos) << error;

  o = DemoOptions{};
  o.change_day = 5000;
  EXPECT_FALSE(o.IsValid(&error));
  EXPECT_NE(error.find("change_day"), std::string::npos) << error;

  o = DemoOptions{};
  o.listing_share = 0.7;
  o.delisting_share = 0.4;
  EXPECT_FALSE(o.IsValid(&error));
  EXPECT_NE(error.find("delisting_share"), std::string::npos) << error;

  EXPECT_TRUE(DemoOptions{}.IsValid(&error));
}

TEST(DemoUniverse, SameSeedSameNumbersDifferentSeedDifferentNumbers) {
  const DemoUniverse& a = default_universe();
  const DemoUniverse b = generate_demo_universe(DemoOptions{});
  ASSERT_EQ(a.values.rows(), b.values.rows());
  ASSERT_EQ(a.values.cols(), b.values.cols());
  for (Eigen::Index t = 0; t < a.values.rows(); ++t) {
    for (Eigen::Index i = 0; i < a.values.cols(); ++i) {
      ASSERT_TRUE(same_cell(a.values(t, i), b.values(t, i))) << "date " << t << " asset " << i;
    }
  }
  EXPECT_EQ(a.loadings_before, b.loadings_before);
  EXPECT_EQ(a.loadings_after, b.loadings_after);
  EXPECT_EQ(a.listed_from, b.listed_from);
  EXPECT_EQ(a.dates, b.dates);

  DemoOptions other;
  other.seed = 8;
  const DemoUniverse c = generate_demo_universe(other);
  Eigen::Index equal = 0;
  for (Eigen::Index t = 0; t < a.values.rows(); ++t) {
    for (Eigen::Index i = 0; i < a.values.cols(); ++i) equal += a.values(t, i) == c.values(t, i);
  }
  EXPECT_EQ(equal, 0);
  EXPECT_NE(a.loadings_before, c.loadings_before);
}

TEST(DemoUniverse, ChangingTheGapRateLeavesObservedValuesAlone) {
  // Separate random streams per purpose: the gap coin never shifts the returns.
  DemoOptions o;
  o.assets = 60;
  o.years = 2;
  const DemoUniverse with_gaps = generate_demo_universe(o);
  o.gap_rate = 0;
  const DemoUniverse without = generate_demo_universe(o);
  for (Eigen::Index t = 0; t < with_gaps.values.rows(); ++t) {
    for (Eigen::Index i = 0; i < with_gaps.values.cols(); ++i) {
      if (!std::isnan(with_gaps.values(t, i))) {
        ASSERT_EQ(with_gaps.values(t, i), without.values(t, i));
      }
    }
  }
}

TEST(DemoUniverse, ShapeDatesAndAssetIds) {
  const DemoUniverse& u = default_universe();
  EXPECT_GE(u.assets.size(), 600u);
  EXPECT_EQ(u.values.cols(), static_cast<Eigen::Index>(u.assets.size()));
  EXPECT_EQ(u.values.rows(), static_cast<Eigen::Index>(u.dates.size()));
  EXPECT_GE(u.dates.size(), 6u * 52u * 5u);
  EXPECT_EQ(u.dates.front().iso(), "2020-01-01");  // a Wednesday, so the first date

  // Six calendar years span at least 6 * 365 days less a weekend's slack.
  EXPECT_GE(engine::days_between(u.dates.front(), u.dates.back()), 6 * 365 - 3);
  for (std::size_t t = 0; t < u.dates.size(); ++t) {
    ASSERT_LT(u.dates[t].weekday(), 5) << u.dates[t] << " is a weekend day";
    if (t > 0) {
      ASSERT_GT(u.dates[t], u.dates[t - 1]) << u.dates[t] << " is not ascending";
    }
  }

  std::set<std::string> unique(u.assets.begin(), u.assets.end());
  EXPECT_EQ(unique.size(), u.assets.size());
  EXPECT_EQ(u.assets.front(), "ZQ-0001");
  EXPECT_EQ(u.assets.back(), "ZQ-0640");
  for (const auto& a : u.assets) {
    ASSERT_EQ(a.size(), 7u) << a;
    ASSERT_EQ(a.substr(0, 3), "ZQ-") << a;
    ASSERT_EQ(a.find_first_not_of("0123456789", 3), std::string::npos) << a;
  }
}

TEST(DemoUniverse, ListingAndDelistingAsPlanned) {
  const DemoUniverse& u = default_universe();
  const int periods = static_cast<int>(u.dates.size());
  const int n = static_cast<int>(u.assets.size());
  int late = 0, early = 0;
  for (int i = 0; i < n; ++i) {
    const int from = u.listed_from[i], until = u.listed_until[i];
    late += from > 0;
    early += until < periods;
    ASSERT_FALSE(from > 0 && until < periods) << "asset " << i << " both lists late and delists early";
    ASSERT_GE(until - from, periods / 4) << "asset " << i << " listed for too short a span";
    for (int t = 0; t < from; ++t) ASSERT_TRUE(std::isnan(u.values(t, i)));
    for (int t = until; t < periods; ++t) ASSERT_TRUE(std::isnan(u.values(t, i)));
    // Listed at the boundaries unless a scattered gap happens to fall there.
    if (from > 0) {
      EXPECT_TRUE(!std::isnan(u.values(from, i)) || !std::isnan(u.values(from + 1, i)));
    }
  }
  EXPECT_EQ(late, 64);   // 10% of 640
  EXPECT_EQ(early, 38);  // 6% of 640, rounded
}

TEST(DemoUniverse, GapRateNearTheOption) {
  const DemoUniverse& u = default_universe();
  double listed = 0, gaps = 0;
  for (int i = 0; i < static_cast<int>(u.assets.size()); ++i) {
    for (int t = u.listed_from[i]; t < u.listed_until[i]; ++t) {
      listed += 1;
      gaps += std::isnan(u.values(t, i));
    }
  }
  // Each listed cell is missing independently with probability p: the count is
  // binomial, so allow 5 standard deviations sqrt(n p (1 - p)).
  const double p = u.options.gap_rate;
  const double sd = std::sqrt(listed * p * (1 - p));
  EXPECT_NEAR(gaps, listed * p, 5 * sd) << "listed cells " << listed;
  EXPECT_GT(gaps, 0);

  DemoOptions none;
  none.assets = 40;
  none.years = 1;
  none.gap_rate = 0;
  const DemoUniverse v = generate_demo_universe(none);
  for (int i = 0; i < 40; ++i) {
    for (int t = v.listed_from[i]; t < v.listed_until[i]; ++t) ASSERT_FALSE(std::isnan(v.values(t, i)));
  }
}

// Planted-structure test: the planted matrices themselves are what the README says.
TEST(DemoPlantedStructure, OnlyTheMovingFactorChangesItsLoadings) {
  const DemoUniverse& u = default_universe();
  const int k = static_cast<int>(u.loadings_before.cols());
  ASSERT_EQ(k, 4);
  EXPECT_EQ(u.moving_factor, 3);
  EXPECT_EQ(u.from_cluster, 2);
  EXPECT_EQ(u.to_cluster, 4);
  EXPECT_EQ(u.change_index, static_cast<int>(u.dates.size()) * 3 / 5);
  EXPECT_GT(u.loadings_before.col(0).minCoeff(), 0.0) << "f1 is market-like: all positive";

  for (int j = 0; j < k; ++j) {
    const double phi = congruence(u.loadings_before.col(j), u.loadings_after.col(j));
    if (j + 1 == u.moving_factor) {
      EXPECT_LT(std::abs(phi), 0.2) << "f" << j + 1 << " should have moved";
    } else {
      EXPECT_GT(phi, 0.999999) << "f" << j + 1 << " should be unchanged";
      EXPECT_EQ(u.loadings_before.col(j), u.loadings_after.col(j));
    }
  }
  // The moving column's block sits on cluster 2 before and on cluster 4 after.
  const int m = u.moving_factor - 1;
  for (int i = 0; i < static_cast<int>(u.assets.size()); ++i) {
    if (u.cluster[i] == u.from_cluster) {
      EXPECT_GT(u.loadings_before(i, m), 0.003) << u.assets[i];
      EXPECT_LT(std::abs(u.loadings_after(i, m)), 0.003) << u.assets[i];
    }
    if (u.cluster[i] == u.to_cluster) {
      EXPECT_LT(std::abs(u.loadings_before(i, m)), 0.003) << u.assets[i];
      EXPECT_GT(u.loadings_after(i, m), 0.003) << u.assets[i];
    }
  }
}

struct Segment {
  int begin, end;
  bool after_change;
};

// Planted-structure test: the sample covariance of each regime's data matches the
// planted Sigma = L L' + Psi of that regime within sampling error.
TEST(DemoPlantedStructure, SampleCovarianceMatchesPlantedSigmaInEachRegime) {
  const DemoUniverse& u = default_universe();
  const int periods = static_cast<int>(u.dates.size());
  for (const Segment& s : {Segment{0, u.change_index, false}, Segment{u.change_index, periods, true}}) {
    const std::vector<int> keep = listed_throughout(u, s.begin, s.end);
    ASSERT_GE(keep.size(), 500u);
    const Eigen::MatrixXd sample = pairwise_covariance(u, s.begin, s.end, keep);
    const Eigen::MatrixXd truth = restrict(u.planted_covariance(s.after_change), keep);
    const double error = relative_frobenius(sample, truth);
    const double tolerance = sampling_tolerance(truth, s.end - s.begin);
    EXPECT_LT(error, tolerance) << (s.after_change ? "after" : "before") << " the change, T = "
                                << s.end - s.begin << ", N = " << keep.size();
    // And the diagonal on its own: each variance within 5 standard errors sqrt(2/T)
    // in relative terms, on average over the assets.
    const Eigen::ArrayXd ratio = sample.diagonal().array() / truth.diagonal().array();
    EXPECT_NEAR(ratio.mean(), 1.0, 5 * std::sqrt(2.0 / (s.end - s.begin)));
  }
}

// Planted-structure test: the change is visible in the data. The full-matrix
// Frobenius error is dominated by the market factor, which does not change, so it
// cannot tell the regimes apart by itself; the difference of squared errors against
// the two planted Sigmas can: the shared market noise cancels and what remains is
// ||Sigma_before - Sigma_after||_F^2 plus a small cross term.
TEST(DemoPlantedStructure, EachRegimeIsCloserToItsOwnPlantedSigma) {
  const DemoUniverse& u = default_universe();
  const int periods = static_cast<int>(u.dates.size());
  for (const Segment& s : {Segment{0, u.change_index, false}, Segment{u.change_index, periods, true}}) {
    const std::vector<int> keep = listed_throughout(u, s.begin, s.end);
    const Eigen::MatrixXd sample = pairwise_covariance(u, s.begin, s.end, keep);
    const Eigen::MatrixXd own = restrict(u.planted_covariance(s.after_change), keep);
    const Eigen::MatrixXd other = restrict(u.planted_covariance(!s.after_change), keep);
    const double gap = (sample - other).squaredNorm() - (sample - own).squaredNorm();
    const double separation = (own - other).squaredNorm();
    // Expected gap equals the separation; require at least half of it.
    EXPECT_GT(gap, 0.5 * separation) << (s.after_change ? "after" : "before") << " the change";
  }
}

// Planted-structure test: in the data, the moving factor ties its cluster together
// before the change and the receiving cluster after it. The mean covariance between
// distinct assets of a cluster, less the planted market part, estimates the mean
// product of that cluster's block loadings on the moving factor (~2.5e-5 for f3)
// or ~0 without one. Comparing the two clusters cancels the market factor's own
// sampling error (sd ~ sqrt(2/T) x 1e-4, too large to ignore), common to both.
TEST(DemoPlantedStructure, MovingFactorShowsInWithinClusterCovariance) {
  const DemoUniverse& u = default_universe();
  const int periods = static_cast<int>(u.dates.size());
  const auto within = [&](int begin, int end, int c) {
    std::vector<int> keep;
    for (int i : listed_throughout(u, begin, end)) {
      if (u.cluster[i] == c) keep.push_back(i);
    }
    const Eigen::MatrixXd sample = pairwise_covariance(u, begin, end, keep);
    double sum = 0;
    int count = 0;
    for (int a = 0; a < static_cast<int>(keep.size()); ++a) {
      for (int b = 0; b < a; ++b) {
        sum += sample(a, b) - u.loadings_before(keep[a], 0) * u.loadings_before(keep[b], 0);
        ++count;
      }
    }
    return sum / count;
  };
  const double scale = 0.008 * 0.008;  // f3's block loading scale (default options), squared
  const double before = within(0, u.change_index, u.from_cluster) - within(0, u.change_index, u.to_cluster);
  const double after = within(u.change_index, periods, u.from_cluster) - within(u.change_index, periods, u.to_cluster);
  EXPECT_GT(before, 0.5 * scale);
  EXPECT_LT(after, -0.5 * scale);
}

}  // namespace
}  // namespace factorwatch::demo
