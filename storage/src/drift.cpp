#include "factorwatch/storage/drift.h"

#include <SQLiteCpp/SQLiteCpp.h>

#include <cmath>
#include <limits>
#include <map>
#include <nlohmann/json.hpp>

#include "asset_directory.h"
#include "blob_codec.h"
#include "damage_context.h"
#include "factorwatch/storage/date_key.h"
#include "factorwatch/storage/windows.h"

namespace factorwatch::storage {
namespace {

Eigen::VectorXd vector_column(SQLite::Statement& q, int index, const char* name) {
  const SQLite::Column c = q.getColumn(index);
  return detail::decode_vector(c.getBlob(), static_cast<std::size_t>(c.getBytes()), name);
}

Eigen::MatrixXd matrix_column(SQLite::Statement& q, int index, const char* name) {
  const SQLite::Column c = q.getColumn(index);
  return detail::decode_matrix(c.getBlob(), static_cast<std::size_t>(c.getBytes()), name);
}

// " AND <column> >= ?n AND <column> <= ?m" for the given ends, binding from `next`.
struct DateRange {
  std::string sql;
  std::vector<std::int32_t> values;
};
DateRange date_range(const std::string& column, std::optional<engine::Date> from, std::optional<engine::Date> to) {
  DateRange r;
  if (from) {
    r.sql += " AND " + column + " >= ?";
    r.values.push_back(from->key());
  }
  if (to) {
    r.sql += " AND " + column + " <= ?";
    r.values.push_back(to->key());
  }
  return r;
}

std::vector<engine::AssetMove> parse_moves(const nlohmann::json& j) {
  std::vector<engine::AssetMove> out;
  for (const auto& m : j)
    out.push_back({m.at("asset").get<std::string>(), m.at("standardized_change").get<double>(),
                   m.at("exposure_change").get<double>()});
  return out;
}

}  // namespace

std::vector<DriftRecord> read_drift(Database& db, long model_version_id, std::optional<engine::Date> from,
                                    std::optional<engine::Date> to, const std::string& against) {
  const DateRange range = date_range("w.as_of", from, to);
  SQLite::Statement q(db.sql(),
                      "SELECT w.as_of, d.against, d.against_as_of, d.status, d.shared, d.congruence, d.principal_angles, "
                      "d.factor_variance_change, d.explained_share_change, d.mean_exposure_change, d.communality_change, "
                      "d.movers FROM window_drift d JOIN windows w ON w.id = d.window_id WHERE w.model_version_id = ?" +
                          range.sql + (against.empty() ? "" : " AND d.against = ?") +
                          " ORDER BY w.as_of, d.against DESC");
  int index = 1;
  q.bind(index++, static_cast<std::int64_t>(model_version_id));
  for (std::int32_t v : range.values) q.bind(index++, v);
  if (!against.empty()) q.bind(index++, against);
  std::vector<DriftRecord> out;
  while (q.executeStep()) {
    DriftRecord r;
    r.as_of = stored_date(q.getColumn(0).getInt());
    r.against = q.getColumn(1).getString();
    r.against_as_of = stored_date(q.getColumn(2).getInt());
    r.status = q.getColumn(3).getString();
    r.shared = q.getColumn(4).getInt64();
    try {
      r.congruence = vector_column(q, 5, "congruence");
      r.principal_angles_degrees = vector_column(q, 6, "principal_angles");
      r.factor_variance_change = vector_column(q, 7, "factor_variance_change");
      r.explained_share_change = vector_column(q, 8, "explained_share_change");
    } catch (const DamagedData& e) {
      detail::rethrow_for_window(db, model_version_id, q.getColumn(0).getInt(), "window_drift", e);
    }
    r.mean_exposure_change = q.getColumn(9).getDouble();
    r.communality_change = q.getColumn(10).getDouble();
    for (const auto& factor : nlohmann::json::parse(q.getColumn(11).getString())) r.movers.push_back(parse_moves(factor));
    out.push_back(std::move(r));
  }
  return out;
}

std::vector<DriftAlert> read_alerts(Database& db, long model_version_id, std::optional<engine::Date> from,
                                    std::optional<engine::Date> to) {
  const DateRange range = date_range("w.as_of", from, to);
  SQLite::Statement q(db.sql(),
                      "SELECT w.as_of, a.against, d.against_as_of, a.factor, a.congruence, a.threshold, d.movers "
                      "FROM drift_alerts a JOIN windows w ON w.id = a.window_id "
                      "JOIN window_drift d ON d.window_id = a.window_id AND d.against = a.against "
                      "WHERE w.model_version_id = ?" +
                          range.sql + " ORDER BY w.as_of, a.against DESC, a.factor");
  int index = 1;
  q.bind(index++, static_cast<std::int64_t>(model_version_id));
  for (std::int32_t v : range.values) q.bind(index++, v);
  std::vector<DriftAlert> out;
  while (q.executeStep()) {
    DriftAlert a;
    a.as_of = stored_date(q.getColumn(0).getInt());
    a.against = q.getColumn(1).getString();
    a.against_as_of = stored_date(q.getColumn(2).getInt());
    a.factor = q.getColumn(3).getInt();
    a.congruence = q.getColumn(4).getDouble();
    if (a.congruence < -1.5) a.congruence = std::numeric_limits<double>::quiet_NaN();  // a vanished factor
    a.threshold = q.getColumn(5).getDouble();
    const nlohmann::json movers = nlohmann::json::parse(q.getColumn(6).getString());
    if (a.factor >= 1 && static_cast<std::size_t>(a.factor) <= movers.size()) a.movers = parse_moves(movers[a.factor - 1]);
    out.push_back(std::move(a));
  }
  return out;
}

std::vector<StoredExposure> read_stored_exposures(Database& db, long model_version_id, const std::string& asset,
                                                  std::optional<engine::Date> from, std::optional<engine::Date> to) {
  const std::int32_t id = db.assets().id(asset);
  const DateRange range = date_range("w.as_of", from, to);
  // Only the columns an asset's row needs: not the statistics, means or eigenvalues.
  SQLite::Statement q(db.sql(),
                      "SELECT w.as_of, w.usable, w.assets, w.loadings, w.specific_variance, w.communality, "
                      "w.factor_covariance, w.rotation, a.alignment, a.status FROM windows w "
                      "LEFT JOIN window_alignments a ON a.window_id = w.id WHERE w.model_version_id = ?" +
                          range.sql + " ORDER BY w.as_of");
  int index = 1;
  q.bind(index++, static_cast<std::int64_t>(model_version_id));
  for (std::int32_t v : range.values) q.bind(index++, v);
  std::vector<StoredExposure> out;
  while (q.executeStep()) {
    StoredExposure p;
    p.as_of = stored_date(q.getColumn(0).getInt());
    p.alignment = q.getColumn(9).isNull() ? "not aligned yet" : q.getColumn(9).getString();
    try {
      const SQLite::Column ids = q.getColumn(2);
      const std::vector<std::int32_t> assets =
          detail::decode_int32s(ids.getBlob(), static_cast<std::size_t>(ids.getBytes()), "assets");
      std::size_t row = assets.size();
      for (std::size_t i = 0; i < assets.size() && id >= 0; ++i)
        if (assets[i] == id) row = i;
      if (row < assets.size() && q.getColumn(1).getInt() != 0) {
        const auto r = static_cast<Eigen::Index>(row);
        const Eigen::MatrixXd loadings = matrix_column(q, 3, "loadings");
        const Eigen::VectorXd specific = vector_column(q, 4, "specific_variance");
        const Eigen::VectorXd communality = vector_column(q, 5, "communality");
        if (loadings.rows() != static_cast<Eigen::Index>(assets.size()) || specific.size() <= r || communality.size() <= r)
          throw DamagedData("the asset list and the loadings disagree in length");
        p.present = true;
        p.fitted_exposures = loadings.row(r).transpose();
        if (!q.getColumn(7).isNull()) p.rotation = matrix_column(q, 7, "rotation");
        if (!q.getColumn(8).isNull()) p.alignment_matrix = matrix_column(q, 8, "alignment");
        p.specific_variance = specific(r);
        p.communality = communality(r);
      }
    } catch (const DamagedData& e) {
      detail::rethrow_for_window(db, model_version_id, q.getColumn(0).getInt(), "windows", e);
    }
    out.push_back(std::move(p));
  }
  return out;
}

}  // namespace factorwatch::storage
