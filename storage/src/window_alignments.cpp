#include "factorwatch/storage/window_alignments.h"

#include <SQLiteCpp/SQLiteCpp.h>

#include <cmath>
#include <nlohmann/json.hpp>

#include "blob_codec.h"
#include "factorwatch/storage/date_key.h"
#include "factorwatch/storage/timestamps.h"

namespace factorwatch::storage {
namespace {

void bind_blob(SQLite::Statement& q, int index, const std::string& bytes) {
  q.bind(index, bytes.data(), static_cast<int>(bytes.size()));
}

}  // namespace

std::vector<AlignmentState> alignment_states(Database& db, long model_version_id) {
  SQLite::Statement q(db.sql(),
                      "SELECT w.id, w.as_of, w.usable, a.window_id IS NOT NULL FROM windows w "
                      "LEFT JOIN window_alignments a ON a.window_id = w.id WHERE w.model_version_id = ? ORDER BY w.as_of");
  q.bind(1, static_cast<std::int64_t>(model_version_id));
  std::vector<AlignmentState> rows;
  while (q.executeStep())
    rows.push_back({q.getColumn(0).getInt64(), stored_date(q.getColumn(1).getInt()), q.getColumn(2).getInt() != 0,
                    q.getColumn(3).getInt() != 0});
  return rows;
}

void save_alignment(Database& db, long long window_id, const WindowAlignment& a) {
  SQLite::Statement q(db.sql(),
                      "INSERT OR REPLACE INTO window_alignments (window_id, status, message, reference, "
                      "reference_as_of, shared, alignment, residual, factor_fit, aligned_at) "
                      "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)");
  q.bind(1, static_cast<std::int64_t>(window_id));
  q.bind(2, a.status);
  q.bind(3, a.message);
  q.bind(4, a.reference);
  if (a.reference_as_of) q.bind(5, a.reference_as_of->key());
  else q.bind(5);
  q.bind(6, static_cast<std::int64_t>(a.shared));
  bind_blob(q, 7, detail::encode_doubles(a.matrix));
  if (std::isfinite(a.residual)) q.bind(8, a.residual);
  else q.bind(8);
  bind_blob(q, 9, detail::encode_doubles(a.factor_fit));
  q.bind(10, utc_timestamp());
  q.exec();
}

void forget_alignment(Database& db, long long window_id) {
  SQLite::Statement q(db.sql(), "DELETE FROM window_alignments WHERE window_id = ?");
  q.bind(1, static_cast<std::int64_t>(window_id));
  q.exec();
}

void forget_drift(Database& db, long long window_id, const std::string& against) {
  for (const char* table : {"window_drift", "drift_alerts"}) {
    SQLite::Statement q(db.sql(), std::string("DELETE FROM ") + table + " WHERE window_id = ?" +
                                      (against.empty() ? "" : " AND against = ?"));
    q.bind(1, static_cast<std::int64_t>(window_id));
    if (!against.empty()) q.bind(2, against);
    q.exec();
  }
}

void save_drift(Database& db, long long window_id, const DriftRecord& d) {
  nlohmann::json movers = nlohmann::json::array();
  for (const std::vector<engine::AssetMove>& factor_moves : d.movers) {
    nlohmann::json factor = nlohmann::json::array();
    for (const engine::AssetMove& m : factor_moves)
      factor.push_back({{"asset", m.asset}, {"standardized_change", m.standardized_change},
                        {"exposure_change", m.exposure_change}});
    movers.push_back(std::move(factor));
  }
  SQLite::Statement q(db.sql(),
                      "INSERT OR REPLACE INTO window_drift (window_id, against, against_as_of, status, shared, "
                      "congruence, principal_angles, factor_variance_change, explained_share_change, "
                      "mean_exposure_change, communality_change, movers) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)");
  q.bind(1, static_cast<std::int64_t>(window_id));
  q.bind(2, d.against);
  q.bind(3, d.against_as_of.key());
  q.bind(4, d.status);
  q.bind(5, static_cast<std::int64_t>(d.shared));
  bind_blob(q, 6, detail::encode_doubles(d.congruence));
  bind_blob(q, 7, detail::encode_doubles(d.principal_angles_degrees));
  bind_blob(q, 8, detail::encode_doubles(d.factor_variance_change));
  bind_blob(q, 9, detail::encode_doubles(d.explained_share_change));
  q.bind(10, d.mean_exposure_change);
  q.bind(11, d.communality_change);
  q.bind(12, movers.dump());
  q.exec();
}

void save_alert(Database& db, long long window_id, const DriftAlert& a) {
  SQLite::Statement q(db.sql(), "INSERT OR REPLACE INTO drift_alerts (window_id, against, factor, congruence, threshold) "
                                "VALUES (?, ?, ?, ?, ?)");
  q.bind(1, static_cast<std::int64_t>(window_id));
  q.bind(2, a.against);
  q.bind(3, a.factor);
  // Below any congruence: a vanished factor is stored as -2 and read back as NaN (drift.cpp).
  q.bind(4, std::isfinite(a.congruence) ? a.congruence : -2.0);
  q.bind(5, a.threshold);
  q.exec();
}

}  // namespace factorwatch::storage
