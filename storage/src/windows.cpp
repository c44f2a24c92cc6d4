#include "factorwatch/storage/windows.h"

#include <SQLiteCpp/SQLiteCpp.h>

#include <cmath>
#include <cstdio>
#include <functional>
#include <limits>
#include <nlohmann/json.hpp>
#include <stdexcept>
#include <string_view>

#include "asset_directory.h"
#include "blob_codec.h"
#include "damage_context.h"
#include "factorwatch/storage/date_key.h"
#include "factorwatch/storage/returns_span.h"
#include "factorwatch/storage/timestamps.h"

namespace factorwatch::storage {
namespace {

using nlohmann::json;

// JSON has no NaN or infinity; a failed fit may carry them, so they travel as strings.
json number(double x) {
  if (std::isfinite(x)) return x;
  return std::isnan(x) ? "nan" : (x > 0 ? "inf" : "-inf");
}

double number(const json& j) {
  if (j.is_number()) return j.get<double>();
  const std::string s = j.get<std::string>();
  if (s == "inf") return std::numeric_limits<double>::infinity();
  if (s == "-inf") return -std::numeric_limits<double>::infinity();
  return std::numeric_limits<double>::quiet_NaN();
}

engine::Termination parse_termination(const std::string& s) {
  for (engine::Termination t : {engine::Termination::not_run, engine::Termination::converged,
                                engine::Termination::iteration_limit, engine::Termination::numerical_failure,
                                engine::Termination::not_identified})
    if (s == engine::to_string(t)) return t;
  throw std::runtime_error("stored window: unknown termination '" + s + "'");
}

json statistics(const engine::FactorFit& fit) {
  json excluded = json::array();
  for (const auto& e : fit.excluded) excluded.push_back({{"asset", e.asset}, {"reason", e.reason}});
  int heywood = 0;
  for (bool h : fit.heywood) heywood += h;
  return {{"termination", engine::to_string(fit.termination)},
          {"message", fit.message},
          {"method", engine::to_string(fit.method)},
          {"basis", engine::to_string(fit.basis)},
          {"solver_path", fit.solver_path},
          {"gap_handling", fit.gap_handling},
          {"warm_started", fit.warm_started},
          {"periods", fit.periods},
          {"effective_sample_size", number(fit.effective_sample_size)},
          {"excluded", excluded},
          {"heywood_count", heywood},
          {"trace", number(fit.trace)},
          {"explained_total", number(fit.explained_total)},
          {"log_likelihood", number(fit.log_likelihood)},
          {"lr_test",
           {{"defined", fit.lr_test.defined},
            {"statistic", number(fit.lr_test.statistic)},
            {"dof", number(fit.lr_test.dof)},
            {"p_value", number(fit.lr_test.p_value)}}},
          {"iterations", fit.iterations},
          {"converged", fit.converged},
          // From the gradient stopping rule on (absent in windows fitted before it).
          {"largest_scaled_gradient", number(fit.largest_scaled_gradient)},
          {"tolerance", number(fit.tolerance)},
          {"em_passes", fit.em_passes},
          {"newton_steps", fit.newton_steps},
          {"profile_steps", fit.profile_steps}};
}

void restore_statistics(const json& j, engine::FactorFit& fit) {
  fit.termination = parse_termination(j.at("termination").get<std::string>());
  fit.message = j.at("message").get<std::string>();
  fit.method = *engine::parse_method(j.at("method").get<std::string>());
  fit.basis = *engine::parse_basis(j.at("basis").get<std::string>());
  fit.solver_path = j.at("solver_path").get<std::string>();
  fit.gap_handling = j.at("gap_handling").get<std::string>();
  fit.warm_started = j.at("warm_started").get<bool>();
  fit.periods = j.at("periods").get<Eigen::Index>();
  fit.effective_sample_size = number(j.at("effective_sample_size"));
  for (const auto& e : j.at("excluded")) fit.excluded.push_back({e.at("asset"), e.at("reason")});
  fit.trace = number(j.at("trace"));
  fit.explained_total = number(j.at("explained_total"));
  fit.log_likelihood = number(j.at("log_likelihood"));
  const json& lr = j.at("lr_test");
  fit.lr_test.defined = lr.at("defined").get<bool>();
  fit.lr_test.statistic = number(lr.at("statistic"));
  fit.lr_test.dof = number(lr.at("dof"));
  fit.lr_test.p_value = number(lr.at("p_value"));
  fit.iterations = j.at("iterations").get<int>();
  fit.converged = j.at("converged").get<bool>();
  // Windows fitted under the old stopping rule (relative change of the log-likelihood)
  // carry no criterion: it stays NaN and the surfaces show it as missing.
  if (j.contains("largest_scaled_gradient")) {
    fit.largest_scaled_gradient = number(j.at("largest_scaled_gradient"));
    fit.tolerance = number(j.at("tolerance"));
    fit.em_passes = j.at("em_passes").get<int>();
    fit.newton_steps = j.at("newton_steps").get<int>();
    if (j.contains("profile_steps")) fit.profile_steps = j.at("profile_steps").get<int>();
  }
}

void bind_blob(SQLite::Statement& q, int index, const std::string& bytes) {
  q.bind(index, bytes.data(), static_cast<int>(bytes.size()));
}

Eigen::MatrixXd matrix_column(SQLite::Statement& q, const char* name) {
  const SQLite::Column c = q.getColumn(name);
  return detail::decode_matrix(c.getBlob(), static_cast<std::size_t>(c.getBytes()), name);
}

Eigen::VectorXd vector_column(SQLite::Statement& q, const char* name) {
  const SQLite::Column c = q.getColumn(name);
  return detail::decode_vector(c.getBlob(), static_cast<std::size_t>(c.getBytes()), name);
}

WindowRecord read_fields(Database& db, SQLite::Statement& q) {
  WindowRecord w;
  w.as_of = stored_date(q.getColumn("as_of").getInt());
  w.first_date = stored_date(q.getColumn("first_date").getInt());
  w.configuration_hash = q.getColumn("configuration_hash").getString();
  w.input_hash = q.getColumn("input_hash").getString();
  w.total_seconds = q.getColumn("total_seconds").getDouble();
  w.fitted_at = q.getColumn("fitted_at").getString();
  w.stale = q.getColumn("stale").getInt() != 0;
  engine::FactorFit& fit = w.fit;
  restore_statistics(json::parse(q.getColumn("statistics").getString()), fit);
  fit.factors = q.getColumn("factors").getInt();
  fit.fit_seconds = q.getColumn("fit_seconds").getDouble();
  const SQLite::Column ids = q.getColumn("assets");
  for (std::int32_t id : detail::decode_int32s(ids.getBlob(), static_cast<std::size_t>(ids.getBytes()), "assets"))
    fit.assets.push_back(db.assets().name(id));
  fit.mean = vector_column(q, "mean");
  fit.scale = vector_column(q, "scale");
  fit.loadings = matrix_column(q, "loadings");
  fit.specific_variance = vector_column(q, "specific_variance");
  fit.communality = vector_column(q, "communality");
  fit.uniqueness = vector_column(q, "uniqueness");
  const SQLite::Column heywood = q.getColumn("heywood");
  fit.heywood = detail::decode_flags(heywood.getBlob(), static_cast<std::size_t>(heywood.getBytes()), "heywood");
  fit.factor_covariance = matrix_column(q, "factor_covariance");
  fit.eigenvalues = vector_column(q, "eigenvalues");
  fit.explained_share = vector_column(q, "explained_share");
  if (!q.getColumn("rotation").isNull()) w.rotation = matrix_column(q, "rotation");
  if (const SQLite::Column skipped = q.getColumn("skipped_dates"); !skipped.isNull())
    for (std::int32_t key : detail::decode_int32s(skipped.getBlob(), static_cast<std::size_t>(skipped.getBytes()),
                                                  "skipped_dates"))
      w.skipped_dates.push_back(stored_date(key));
  if (!q.getColumn("provenance").isNull()) {
    try {
      const json p = json::parse(q.getColumn("provenance").getString());
      w.provenance = {p.at("program").get<std::string>(), p.at("eigen").get<std::string>(),
                      p.at("spectra").get<std::string>(), p.at("build").get<std::string>()};
    } catch (const json::exception& e) {
      throw DamagedData(std::string("provenance: ") + e.what());
    }
  }
  // A failed fit keeps the assets it was given and has no loadings at all (engine::fit
  // returns before estimating); a usable one has a row for every asset.
  const auto n = static_cast<Eigen::Index>(fit.assets.size());
  const bool no_estimates = fit.loadings.size() == 0 && fit.specific_variance.size() == 0 && fit.heywood.empty();
  if (!(no_estimates && !fit.IsSolutionUsable()) &&
      (fit.loadings.rows() != n || fit.specific_variance.size() != n || fit.heywood.size() != fit.assets.size()))
    throw DamagedData("the asset list and the loadings disagree in length");
  return w;
}

// A window's row, or DamagedData naming the model and the window.
WindowRecord read_record(Database& db, SQLite::Statement& q) {
  try {
    return read_fields(db, q);
  } catch (const DamagedData& e) {
    detail::rethrow_for_window(db, q.getColumn("model_version_id").getInt64(), q.getColumn("as_of").getInt(),
                               "windows", e);
  } catch (const nlohmann::json::exception& e) {  // the statistics text, edited or cut short
    detail::rethrow_for_window(db, q.getColumn("model_version_id").getInt64(), q.getColumn("as_of").getInt(),
                               "windows", std::runtime_error(std::string("statistics: ") + e.what()));
  }
}

}  // namespace

bool save_window(Database& db, long model_version_id, const WindowRecord& w, std::optional<std::uint64_t> input_rows) {
  const engine::FactorFit& fit = w.fit;
  std::vector<std::int32_t> ids;
  ids.reserve(fit.assets.size());
  for (const std::string& name : fit.assets) {
    const std::int32_t id = db.assets().id(name);
    if (id < 0) throw std::invalid_argument("save_window: asset '" + name + "' is not stored");
    ids.push_back(id);
  }
  SQLite::Database& sql = db.sql();
  SQLite::Transaction transaction(sql, SQLite::TransactionBehavior::IMMEDIATE);
  // Under the write lock, so no load can commit between this comparison and the insert.
  const bool current = !input_rows || *input_rows == stored_rows_digest(db, w.first_date, w.as_of);
  // The replaced row's alignment and drift described other numbers.
  for (const char* table : {"window_alignments", "window_drift", "drift_alerts"}) {
    SQLite::Statement forget(sql, std::string("DELETE FROM ") + table +
                                      " WHERE window_id IN (SELECT id FROM windows WHERE model_version_id = ? AND as_of = ?)");
    forget.bind(1, static_cast<std::int64_t>(model_version_id));
    forget.bind(2, w.as_of.key());
    forget.exec();
  }
  SQLite::Statement q(sql,
                      "INSERT OR REPLACE INTO windows (model_version_id, as_of, first_date, configuration_hash, "
                      "input_hash, asset_count, factors, usable, termination, assets, mean, scale, loadings, "
                      "specific_variance, communality, uniqueness, heywood, factor_covariance, eigenvalues, "
                      "explained_share, statistics, fit_seconds, total_seconds, fitted_at, rotation, stale, provenance, "
                      "skipped_dates) "
                      "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)");
  q.bind(1, static_cast<std::int64_t>(model_version_id));
  q.bind(2, w.as_of.key());
  q.bind(3, w.first_date.key());
  q.bind(4, w.configuration_hash);
  q.bind(5, w.input_hash);
  q.bind(6, static_cast<int>(fit.assets.size()));
  q.bind(7, fit.factors);
  q.bind(8, fit.IsSolutionUsable() ? 1 : 0);
  q.bind(9, engine::to_string(fit.termination));
  // SQLite copies blob parameters on bind (SQLITE_TRANSIENT), so temporaries are safe.
  bind_blob(q, 10, detail::encode_int32s(ids));
  bind_blob(q, 11, detail::encode_doubles(fit.mean));
  bind_blob(q, 12, detail::encode_doubles(fit.scale));
  bind_blob(q, 13, detail::encode_doubles(fit.loadings));
  bind_blob(q, 14, detail::encode_doubles(fit.specific_variance));
  bind_blob(q, 15, detail::encode_doubles(fit.communality));
  bind_blob(q, 16, detail::encode_doubles(fit.uniqueness));
  bind_blob(q, 17, detail::encode_flags(fit.heywood));
  bind_blob(q, 18, detail::encode_doubles(fit.factor_covariance));
  bind_blob(q, 19, detail::encode_doubles(fit.eigenvalues));
  bind_blob(q, 20, detail::encode_doubles(fit.explained_share));
  q.bind(21, statistics(fit).dump());
  q.bind(22, fit.fit_seconds);
  q.bind(23, w.total_seconds);
  q.bind(24, w.fitted_at.empty() ? utc_timestamp() : w.fitted_at);
  if (w.rotation.size() > 0) bind_blob(q, 25, detail::encode_doubles(w.rotation));
  else q.bind(25);  // NULL: no rotation
  q.bind(26, current ? 0 : 1);
  const engine::BuildInfo& p = w.provenance;
  if (p.program_version.empty()) q.bind(27);  // NULL: not known
  else q.bind(27, json{{"program", p.program_version}, {"eigen", p.eigen_version}, {"spectra", p.spectra_version},
                       {"build", p.build_flags}}.dump());
  if (w.skipped_dates.empty()) {
    q.bind(28);  // NULL: every stored date in the range is in the window
  } else {
    std::vector<std::int32_t> keys;
    for (engine::Date d : w.skipped_dates) keys.push_back(d.key());
    bind_blob(q, 28, detail::encode_int32s(keys));
  }
  q.exec();
  transaction.commit();
  return current;
}

std::vector<WindowSummary> list_windows(Database& db, long model_version_id) {
  SQLite::Statement q(db.sql(),
                      "SELECT w.as_of, w.first_date, w.asset_count, w.factors, w.termination, w.usable, w.statistics, "
                      "w.fit_seconds, w.total_seconds, w.stale, a.status, a.residual FROM windows w "
                      "LEFT JOIN window_alignments a ON a.window_id = w.id WHERE w.model_version_id = ? ORDER BY w.as_of");
  q.bind(1, static_cast<std::int64_t>(model_version_id));
  std::vector<WindowSummary> out;
  while (q.executeStep()) {
    WindowSummary s;
    s.as_of = stored_date(q.getColumn(0).getInt());
    s.first_date = stored_date(q.getColumn(1).getInt());
    s.asset_count = q.getColumn(2).getInt();
    s.factors = q.getColumn(3).getInt();
    s.termination = q.getColumn(4).getString();
    s.usable = q.getColumn(5).getInt() != 0;
    const json stats = json::parse(q.getColumn(6).getString());
    if (!s.usable) s.reason = stats.at("message").get<std::string>();
    s.periods = stats.at("periods").get<Eigen::Index>();
    s.excluded_count = static_cast<int>(stats.at("excluded").size());
    s.warm_started = stats.at("warm_started").get<bool>();
    s.iterations = stats.at("iterations").get<int>();
    if (stats.contains("largest_scaled_gradient"))
      s.largest_scaled_gradient = number(stats.at("largest_scaled_gradient"));
    s.log_likelihood = number(stats.at("log_likelihood"));
    s.explained_total = number(stats.at("explained_total"));
    s.heywood_count = stats.at("heywood_count").get<int>();
    s.fit_seconds = q.getColumn(7).getDouble();
    s.total_seconds = q.getColumn(8).getDouble();
    s.stale = q.getColumn(9).getInt() != 0;
    if (!q.getColumn(10).isNull()) s.alignment = q.getColumn(10).getString();
    if (!q.getColumn(11).isNull()) s.alignment_residual = q.getColumn(11).getDouble();
    out.push_back(std::move(s));
  }
  return out;
}

std::vector<WindowState> window_states(Database& db, long model_version_id) {
  SQLite::Statement q(db.sql(), "SELECT as_of, stale FROM windows WHERE model_version_id = ?");
  q.bind(1, static_cast<std::int64_t>(model_version_id));
  std::vector<WindowState> out;
  while (q.executeStep()) out.push_back({stored_date(q.getColumn(0).getInt()), q.getColumn(1).getInt() != 0});
  return out;
}

WindowCounts count_windows(Database& db, long model_version_id) {
  SQLite::Statement q(db.sql(), "SELECT COUNT(*), TOTAL(stale), MAX(as_of) FROM windows WHERE model_version_id = ?");
  q.bind(1, static_cast<std::int64_t>(model_version_id));
  WindowCounts counts;
  if (q.executeStep()) {
    counts.windows = static_cast<std::size_t>(q.getColumn(0).getInt64());
    counts.stale = static_cast<std::size_t>(q.getColumn(1).getDouble());
    if (!q.getColumn(2).isNull()) counts.latest_as_of = stored_date(q.getColumn(2).getInt());
  }
  return counts;
}

std::optional<WindowRecord> read_window(Database& db, long model_version_id, std::optional<engine::Date> as_of,
                                        bool at_or_before) {
  std::string where = "WHERE model_version_id = ?1";
  if (as_of) where += at_or_before ? " AND as_of <= ?2" : " AND as_of = ?2";
  SQLite::Statement q(db.sql(), "SELECT * FROM windows " + where + " ORDER BY as_of DESC LIMIT 1");
  q.bind(1, static_cast<std::int64_t>(model_version_id));
  if (as_of) q.bind(2, as_of->key());
  if (!q.executeStep()) return std::nullopt;
  WindowRecord record = read_record(db, q);
  record.alignment = read_alignment(db, q.getColumn("id").getInt64());
  return record;
}

std::optional<WindowAlignment> read_alignment(Database& db, long long window_id) {
  SQLite::Statement q(db.sql(),
                      "SELECT status, message, reference, reference_as_of, shared, alignment, residual, factor_fit, "
                      "aligned_at FROM window_alignments WHERE window_id = ?");
  q.bind(1, static_cast<std::int64_t>(window_id));
  if (!q.executeStep()) return std::nullopt;
  WindowAlignment a;
  a.status = q.getColumn(0).getString();
  a.message = q.getColumn(1).getString();
  a.reference = q.getColumn(2).getString();
  if (!q.getColumn(3).isNull()) a.reference_as_of = stored_date(q.getColumn(3).getInt());
  a.shared = q.getColumn(4).getInt64();
  try {
    a.matrix = matrix_column(q, "alignment");
    a.factor_fit = vector_column(q, "factor_fit");
  } catch (const DamagedData& e) {
    SQLite::Statement w(db.sql(), "SELECT model_version_id, as_of FROM windows WHERE id = ?");
    w.bind(1, static_cast<std::int64_t>(window_id));
    if (!w.executeStep()) throw;
    detail::rethrow_for_window(db, w.getColumn(0).getInt64(), w.getColumn(1).getInt(), "window_alignments", e);
  }
  a.residual = q.getColumn(6).isNull() ? std::numeric_limits<double>::quiet_NaN() : q.getColumn(6).getDouble();
  a.aligned_at = q.getColumn(8).getString();
  return a;
}

std::string WindowStamp::key() const {
  char seconds[32];
  std::snprintf(seconds, sizeof seconds, "%a", total_seconds);  // every bit of the timing
  return as_of.iso() + "|" + std::to_string(row_id) + "|" + fitted_at + "|" + input_hash + "|" + seconds + "|" +
         (stale ? "stale" : "current") + "|" + alignment;
}

std::optional<WindowStamp> find_window_stamp(Database& db, long model_version_id, std::optional<engine::Date> as_of,
                                             bool at_or_before, bool usable_only) {
  std::string where = "WHERE model_version_id = ?1";
  if (as_of) where += at_or_before ? " AND as_of <= ?2" : " AND as_of = ?2";
  if (usable_only) where += " AND usable = 1";
  SQLite::Statement q(db.sql(),
                      "SELECT w.as_of, w.id, w.fitted_at, w.input_hash, w.total_seconds, w.stale, "
                      "(SELECT a.alignment FROM window_alignments a WHERE a.window_id = w.id), w.usable, "
                      "w.termination, CASE WHEN w.usable THEN NULL ELSE w.statistics END, w.model_version_id "
                      "FROM windows w " +
                          where + " ORDER BY as_of DESC LIMIT 1");
  q.bind(1, static_cast<std::int64_t>(model_version_id));
  if (as_of) q.bind(2, as_of->key());
  if (!q.executeStep()) return std::nullopt;
  WindowStamp stamp;
  stamp.as_of = stored_date(q.getColumn(0).getInt());
  stamp.row_id = q.getColumn(1).getInt64();
  stamp.fitted_at = q.getColumn(2).getString();
  stamp.input_hash = q.getColumn(3).getString();
  stamp.total_seconds = q.getColumn(4).getDouble();
  stamp.stale = q.getColumn(5).getInt() != 0;
  if (!q.getColumn(6).isNull()) {
    // The alignment matrix itself: a realignment within the same second still changes the key.
    const SQLite::Column r = q.getColumn(6);
    const std::string_view bytes(static_cast<const char*>(r.getBlob()), static_cast<std::size_t>(r.getBytes()));
    char text[32];
    std::snprintf(text, sizeof text, "R%016zx", std::hash<std::string_view>{}(bytes));
    stamp.alignment = text;
  }
  stamp.usable = q.getColumn(7).getInt() != 0;
  stamp.termination = q.getColumn(8).getString();
  // Only a failed window's statistics are read: its message says why it failed.
  if (!q.getColumn(9).isNull()) {
    try {
      stamp.reason = json::parse(q.getColumn(9).getString()).at("message").get<std::string>();
    } catch (const nlohmann::json::exception& e) {
      detail::rethrow_for_window(db, q.getColumn(10).getInt64(), q.getColumn(0).getInt(), "windows",
                                 std::runtime_error(std::string("statistics: ") + e.what()));
    }
  }
  return stamp;
}

}  // namespace factorwatch::storage
