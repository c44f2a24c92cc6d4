#include "factorwatch/engine/factor_scores.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>
#include <stdexcept>
#include <unordered_map>

namespace factorwatch::engine {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// Below this reciprocal condition number of L' Psi^-1 L a Bartlett solve keeps fewer than
// about 4 significant digits of 16: the observed assets do not tell the factors apart.
// Common practice for a "numerically singular" test; not from a source.
constexpr double kMinReciprocalCondition = 1e-12;

void require(bool ok, const std::string& message) {
  if (!ok) throw std::invalid_argument("factor scores: " + message);
}

void check_fit(const FactorFit& fit) {
  const auto n = static_cast<Eigen::Index>(fit.assets.size());
  const Eigen::Index k = fit.loadings.cols();
  require(k >= 1, "the fit has no factors");
  std::ostringstream sizes;
  sizes << fit.assets.size() << " assets, " << fit.loadings.rows() << " loading rows, " << fit.mean.size()
        << " means and " << fit.specific_variance.size() << " specific variances";
  require(fit.loadings.rows() == n && fit.mean.size() == n && fit.specific_variance.size() == n,
          "the fit's sizes disagree (" + sizes.str() + ")");
  require(fit.factor_covariance.size() == 0 || (fit.factor_covariance.rows() == k && fit.factor_covariance.cols() == k),
          "the factor covariance is not k x k");
  require(fit.mean.allFinite() && fit.loadings.allFinite() && fit.factor_covariance.allFinite(),
          "the fit has non-finite means, loadings or factor covariance");
  require(fit.specific_variance.allFinite() && (fit.specific_variance.array() > 0).all(),
          "every specific variance must be finite and positive");
}

// The fit's numbers over the panel's columns: what every date shares.
struct Model {
  Eigen::Index k = 0;
  std::vector<Eigen::Index> columns;  // panel column of each modelled asset, ascending
  Eigen::MatrixXd loadings;           // n_mod x k, rows in `columns` order
  Eigen::MatrixXd weighted;           // n_mod x k: Psi^-1 L
  Eigen::MatrixXd panel_weights;      // N_panel x k: Psi^-1 L on modelled columns, 0 elsewhere
  Eigen::RowVectorXd neutral;         // N_panel: mu on modelled columns, 0 elsewhere (a gap's fill)
  Eigen::RowVectorXd offset;          // mu' Psi^-1 L over the modelled columns
  Eigen::MatrixXd information;        // M = L' Psi^-1 L over the modelled columns
  Eigen::MatrixXd phi;                // factor covariance (identity when the fit has none)
};

Model model_on(const ReturnsPanel& panel, const FactorFit& fit) {
  Model m;
  m.k = fit.loadings.cols();
  std::unordered_map<std::string, Eigen::Index> row_of;
  row_of.reserve(fit.assets.size());
  for (std::size_t i = 0; i < fit.assets.size(); ++i) row_of.emplace(fit.assets[i], static_cast<Eigen::Index>(i));
  std::vector<Eigen::Index> fit_rows;
  for (Eigen::Index c = 0; c < panel.width(); ++c) {
    const auto it = row_of.find(panel.assets[static_cast<std::size_t>(c)]);
    if (it == row_of.end()) continue;
    m.columns.push_back(c);
    fit_rows.push_back(it->second);
  }
  const auto n = static_cast<Eigen::Index>(m.columns.size());
  m.loadings.resize(n, m.k);
  m.weighted.resize(n, m.k);
  m.panel_weights = Eigen::MatrixXd::Zero(panel.width(), m.k);
  m.neutral = Eigen::RowVectorXd::Zero(panel.width());
  m.offset = Eigen::RowVectorXd::Zero(m.k);
  for (Eigen::Index j = 0; j < n; ++j) {
    const Eigen::Index i = fit_rows[static_cast<std::size_t>(j)], c = m.columns[static_cast<std::size_t>(j)];
    m.loadings.row(j) = fit.loadings.row(i);
    m.weighted.row(j) = fit.loadings.row(i) / fit.specific_variance[i];
    m.panel_weights.row(c) = m.weighted.row(j);
    m.neutral[c] = fit.mean[i];
    m.offset += fit.mean[i] * m.weighted.row(j);
  }
  m.information = m.loadings.transpose().lazyProduct(m.weighted);  // k x k: dot products, no threads
  m.phi = fit.factor_covariance.size() ? fit.factor_covariance : Eigen::MatrixXd::Identity(m.k, m.k);
  return m;
}

// Solves for the scores of the dates in the rows of `y` (each y_t = L' Psi^-1 z_t) given the
// information matrix M of the assets observed on them: f = M^-1 y (Bartlett) or
// (Phi^-1 + M)^-1 y = (I + Phi M)^-1 Phi y (regression; no inverse of Phi, so a singular Phi
// is fine too). False when Bartlett's M is numerically singular.
bool solve_scores(ScoreMethod method, const Eigen::MatrixXd& information, const Eigen::MatrixXd& phi,
                  const Eigen::MatrixXd& y, Eigen::MatrixXd& f) {
  if (method == ScoreMethod::bartlett) {
    const Eigen::LLT<Eigen::MatrixXd> llt(information);
    if (llt.info() != Eigen::Success || !(llt.rcond() >= kMinReciprocalCondition)) return false;
    f = llt.solve(y.transpose()).transpose();
    return true;
  }
  const Eigen::Index k = information.rows();
  f = (Eigen::MatrixXd::Identity(k, k) + phi.lazyProduct(information))
          .partialPivLu()
          .solve(phi.lazyProduct(y.transpose()))
          .transpose();
  return true;
}

// Rows `rows` of `from` stacked into `to`.
void gather_rows(const Eigen::MatrixXd& from, const std::vector<Eigen::Index>& rows, Eigen::MatrixXd& to) {
  to.resize(static_cast<Eigen::Index>(rows.size()), from.cols());
  for (std::size_t r = 0; r < rows.size(); ++r) to.row(static_cast<Eigen::Index>(r)) = from.row(rows[r]);
}

}  // namespace

FactorScores factor_scores(const ReturnsPanel& panel, const FactorFit& fit, ScoreMethod method) {
  check_fit(fit);
  require(panel.values.rows() == static_cast<Eigen::Index>(panel.dates.size()) &&
              panel.values.cols() == static_cast<Eigen::Index>(panel.assets.size()),
          "the panel's names and values disagree in size");
  const Model m = model_on(panel, fit);
  const Eigen::Index T = panel.periods(), N = panel.width(), k = m.k;
  const auto modelled = static_cast<Eigen::Index>(m.columns.size());

  FactorScores out;
  out.method = method;
  out.dates = panel.dates;
  out.modelled_assets = modelled;
  out.scores.setConstant(T, k, kNaN);
  out.assets_used.assign(static_cast<std::size_t>(T), 0);

  // y_t = L' Psi^-1 (x_t - mu) for every date, one matrix-vector product per date straight
  // from the panel's row: a gap is filled with the asset's mean (contributing nothing) in a
  // copy of its row, and a column the fit lacks has weight 0, so a date with gaps costs no
  // more here; its missing modelled assets are noted for the correction of M below.
  // Matrix-vector products, not one matrix product: Eigen's matrix products start OpenMP
  // threads for these skinny shapes, which only costs time (measured 3-5x slower on a busy
  // 2-core machine), and the panel is read once either way.
  Eigen::MatrixXd y(T, k);
  std::vector<std::vector<Eigen::Index>> missing(static_cast<std::size_t>(T));  // modelled indices
  std::vector<Eigen::Index> modelled_index(static_cast<std::size_t>(N), -1);
  for (Eigen::Index j = 0; j < modelled; ++j)
    modelled_index[static_cast<std::size_t>(m.columns[static_cast<std::size_t>(j)])] = j;
  Eigen::RowVectorXd filled(N);
  for (Eigen::Index t = 0; t < T; ++t) {
    if (panel.values.row(t).allFinite()) {
      y.row(t).noalias() = panel.values.row(t) * m.panel_weights;
      continue;
    }
    filled = panel.values.row(t);
    for (Eigen::Index c = 0; c < N; ++c) {
      if (std::isfinite(filled[c])) continue;
      filled[c] = m.neutral[c];
      const Eigen::Index j = modelled_index[static_cast<std::size_t>(c)];
      if (j >= 0) missing[static_cast<std::size_t>(t)].push_back(j);
    }
    y.row(t).noalias() = filled * m.panel_weights;
  }
  y.rowwise() -= m.offset;

  // Dates with every modelled asset observed share M: one solve for all of them. A date with
  // gaps gets its own M, from the full one less the missing assets' terms (O(missing k^2)),
  // or, when most are missing, summed over the observed ones (fewer terms, no cancellation).
  const std::string singular = "the loadings of the observed assets do not determine the factors";
  std::vector<Eigen::Index> full_rows, rows;
  Eigen::MatrixXd information, part_loadings, part_weighted, f;
  std::vector<char> absent;
  for (Eigen::Index t = 0; t < T; ++t) {
    const std::vector<Eigen::Index>& gone = missing[static_cast<std::size_t>(t)];
    const Eigen::Index observed = modelled - static_cast<Eigen::Index>(gone.size());
    out.assets_used[static_cast<std::size_t>(t)] = observed;
    if (observed < k + 1) {
      std::ostringstream why;
      why << observed << " modelled asset" << (observed == 1 ? "" : "s") << " observed, fewer than k + 1 = " << k + 1;
      out.unscored.push_back({t, why.str()});
      continue;
    }
    if (gone.empty()) {
      full_rows.push_back(t);
      continue;
    }
    const bool subtract = static_cast<Eigen::Index>(gone.size()) <= observed;
    if (subtract) {
      rows = gone;
    } else {
      absent.assign(static_cast<std::size_t>(modelled), 0);
      for (Eigen::Index j : gone) absent[static_cast<std::size_t>(j)] = 1;
      rows.clear();
      for (Eigen::Index j = 0; j < modelled; ++j)
        if (!absent[static_cast<std::size_t>(j)]) rows.push_back(j);
    }
    gather_rows(m.loadings, rows, part_loadings);
    gather_rows(m.weighted, rows, part_weighted);
    if (subtract)
      information = m.information - part_loadings.transpose().lazyProduct(part_weighted);
    else
      information = part_loadings.transpose().lazyProduct(part_weighted);
    if (!solve_scores(method, information, m.phi, y.row(t), f)) {
      out.unscored.push_back({t, singular});
      continue;
    }
    out.scores.row(t) = f;
  }
  if (!full_rows.empty()) {
    Eigen::MatrixXd block;
    gather_rows(y, full_rows, block);
    if (solve_scores(method, m.information, m.phi, block, f)) {
      for (std::size_t r = 0; r < full_rows.size(); ++r)
        out.scores.row(full_rows[r]) = f.row(static_cast<Eigen::Index>(r));
    } else {
      for (Eigen::Index t : full_rows) out.unscored.push_back({t, singular});
      std::sort(out.unscored.begin(), out.unscored.end(),
                [](const UnscoredDate& a, const UnscoredDate& b) { return a.row < b.row; });
    }
  }
  return out;
}

ResidualReturns residual_returns(const ReturnsPanel& panel, const FactorFit& fit, const FactorScores& scores,
                                 const std::vector<std::string>& assets) {
  check_fit(fit);
  require(scores.dates == panel.dates && scores.scores.rows() == panel.periods() &&
              scores.scores.cols() == fit.loadings.cols(),
          "the scores are not of this panel and fit");
  std::unordered_map<std::string, Eigen::Index> fit_row, column;
  for (std::size_t i = 0; i < fit.assets.size(); ++i) fit_row.emplace(fit.assets[i], static_cast<Eigen::Index>(i));
  for (std::size_t c = 0; c < panel.assets.size(); ++c) column.emplace(panel.assets[c], static_cast<Eigen::Index>(c));

  const Eigen::Index T = panel.periods(), N = panel.width(), k = fit.loadings.cols();
  const auto count = static_cast<Eigen::Index>(assets.size());
  Eigen::MatrixXd loadings_t(k, count);  // the assets' loadings, one column each
  Eigen::RowVectorXd mean(count);
  std::vector<Eigen::Index> columns(assets.size(), -1);  // -1: no column in the panel
  for (std::size_t a = 0; a < assets.size(); ++a) {
    const auto row = fit_row.find(assets[a]);
    require(row != fit_row.end(), "asset '" + assets[a] + "' is not one of the fit's assets");
    loadings_t.col(static_cast<Eigen::Index>(a)) = fit.loadings.row(row->second).transpose();
    mean[static_cast<Eigen::Index>(a)] = fit.mean[row->second];
    const auto col = column.find(assets[a]);
    if (col != column.end()) columns[a] = col->second;
  }
  // Date by date along the panel's rows (the panel is row-major): e_t = (x_t - mu) - f_t L'.
  RowMatrix e(T, count);
  for (Eigen::Index t = 0; t < T; ++t) {
    e.row(t).noalias() = -(scores.scores.row(t) * loadings_t);
    const double* x = panel.values.data() + t * N;
    for (Eigen::Index a = 0; a < count; ++a) {
      const Eigen::Index c = columns[static_cast<std::size_t>(a)];
      e(t, a) = c >= 0 && std::isfinite(x[c]) ? (x[c] - mean[a]) + e(t, a) : kNaN;
    }
  }
  ResidualReturns out;
  out.dates = panel.dates;
  out.assets = assets;
  out.residuals = e;
  return out;
}

}  // namespace factorwatch::engine
