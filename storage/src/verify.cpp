// factorwatch verify: every check a read makes, over every row, collecting the problems
// instead of stopping at the first (verify.h).
#include "factorwatch/storage/verify.h"

#include <SQLiteCpp/SQLiteCpp.h>

#include <chrono>
#include <functional>

#include "blob_codec.h"
#include "damage_context.h"
#include "factorwatch/storage/date_key.h"
#include "returns_rows.h"

namespace factorwatch::storage {
namespace {

enum class Kind { matrix, ids, flags };

struct BlobColumn {
  const char* name;
  Kind kind;
};

// Decodes the blob as a read would: checksum first, then its shape and size.
void check_blob(const SQLite::Column& c, const BlobColumn& column) {
  const void* data = c.getBlob();
  const auto bytes = static_cast<std::size_t>(c.getBytes());
  switch (column.kind) {
    case Kind::matrix: detail::decode_matrix(data, bytes, column.name); break;
    case Kind::ids: detail::decode_int32s(data, bytes, column.name); break;
    case Kind::flags: detail::decode_flags(data, bytes, column.name); break;
  }
}

// Every row of `table`: `place` names the row from the leading columns of `keys`, then
// each blob column is checked (NULL only where `nullable` says so).
void check_table(SQLite::Database& sql, const std::string& table, const std::string& join, const std::string& keys,
                 std::size_t key_count,
                 const std::vector<BlobColumn>& columns, const char* nullable,
                 const std::function<std::string(SQLite::Statement&)>& place, VerifyReport& report,
                 std::size_t& rows) {
  std::string list = keys;
  for (const BlobColumn& c : columns) list += std::string(", ") + c.name;
  SQLite::Statement q(sql, "SELECT " + list + " FROM " + table + join);
  while (q.executeStep()) {
    ++rows;
    for (std::size_t i = 0; i < columns.size(); ++i) {
      const SQLite::Column c = q.getColumn(static_cast<int>(key_count + i));
      if (c.isNull()) {
        if (!nullable || std::string(nullable) != columns[i].name)
          report.problems.push_back({table, place(q), std::string("column '") + columns[i].name + "' is missing (NULL)"});
        continue;
      }
      ++report.blobs;
      try {
        check_blob(c, columns[i]);
      } catch (const std::exception& e) {
        report.problems.push_back({table, place(q), e.what()});
      }
    }
  }
}

}  // namespace

VerifyReport verify_database(Database& db) {
  const auto start = std::chrono::steady_clock::now();
  SQLite::Database& sql = db.sql();
  VerifyReport report;
  {
    SQLite::Statement q(sql, "PRAGMA integrity_check");
    while (q.executeStep()) {
      const std::string line = q.getColumn(0).getString();
      if (line != "ok") report.problems.push_back({"(file)", "", "SQLite integrity check: " + line});
    }
  }
  {
    SQLite::Statement q(sql, "SELECT date, asset_ids, returns, checksum FROM returns ORDER BY date");
    detail::CrossSection row;
    while (q.executeStep()) {
      ++report.returns_rows;
      const std::int32_t date = q.getColumn(0).getInt();
      try {
        detail::decode_cross_section(date, q.getColumn(1), q.getColumn(2), q.getColumn(3), row);
      } catch (const std::exception& e) {
        // The reader's advice ("... or run factorwatch verify") is for other commands.
        std::string what = e.what();
        what = what.substr(0, what.find("; restore the database"));
        report.problems.push_back({"returns", "date " + key_text(date), what});
      }
    }
  }
  check_table(sql, "windows", "", "model_version_id, as_of", 2,
              {{"assets", Kind::ids},
               {"mean", Kind::matrix},
               {"scale", Kind::matrix},
               {"loadings", Kind::matrix},
               {"specific_variance", Kind::matrix},
               {"communality", Kind::matrix},
               {"uniqueness", Kind::matrix},
               {"heywood", Kind::flags},
               {"factor_covariance", Kind::matrix},
               {"eigenvalues", Kind::matrix},
               {"explained_share", Kind::matrix},
               {"rotation", Kind::matrix}},
              "rotation",
              [&](SQLite::Statement& q) {
                return detail::window_place(db, q.getColumn(0).getInt64(), q.getColumn(1).getInt(), nullptr);
              },
              report, report.windows);
  const std::string window_of = " a JOIN windows w ON w.id = a.window_id";
  check_table(sql, "window_alignments", window_of, "w.model_version_id, w.as_of", 2,
              {{"alignment", Kind::matrix}, {"factor_fit", Kind::matrix}}, nullptr,
              [&](SQLite::Statement& q) {
                return detail::window_place(db, q.getColumn(0).getInt64(), q.getColumn(1).getInt(), nullptr);
              },
              report, report.alignments);
  check_table(sql, "window_drift", window_of, "w.model_version_id, w.as_of, a.against", 3,
              {{"congruence", Kind::matrix},
               {"principal_angles", Kind::matrix},
               {"factor_variance_change", Kind::matrix},
               {"explained_share_change", Kind::matrix}},
              nullptr,
              [&](SQLite::Statement& q) {
                return detail::window_place(db, q.getColumn(0).getInt64(), q.getColumn(1).getInt(), nullptr) +
                       ", against " + q.getColumn(2).getString();
              },
              report, report.drift_rows);
  // Rows that lost their window cannot be named by it; count them as problems too.
  for (const char* table : {"window_alignments", "window_drift"}) {
    const int orphans = sql.execAndGet(std::string("SELECT count(*) FROM ") + table +
                                       " WHERE window_id NOT IN (SELECT id FROM windows)")
                            .getInt();
    if (orphans > 0)
      report.problems.push_back({table, "", std::to_string(orphans) + " rows belong to no stored window"});
  }
  report.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return report;
}

}  // namespace factorwatch::storage
