// Merging a validated returns panel into the database (ingest.h states the rules).
#include "factorwatch/storage/ingest.h"

#include <SQLiteCpp/SQLiteCpp.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstring>
#include <numeric>
#include <unordered_map>
#include <vector>

#include "blob_codec.h"
#include "factorwatch/storage/date_key.h"
#include "factorwatch/storage/timestamps.h"
#include "returns_rows.h"

namespace factorwatch::storage {
namespace {

struct Correction {
  std::int32_t date;
  std::int32_t asset;
  double old_value;
  double new_value;
};

// Ids of the panel's assets, adding the ones the database has not seen.
std::vector<std::int32_t> asset_ids(SQLite::Database& sql, const std::vector<std::string>& names,
                                    std::size_t& added) {
  std::unordered_map<std::string, std::int32_t> known;
  SQLite::Statement all(sql, "SELECT id, name FROM assets");
  while (all.executeStep()) known.emplace(all.getColumn(1).getString(), all.getColumn(0).getInt());
  SQLite::Statement insert(sql, "INSERT INTO assets (name) VALUES (?)");
  std::vector<std::int32_t> ids(names.size());
  for (std::size_t j = 0; j < names.size(); ++j) {
    const auto found = known.find(names[j]);
    if (found != known.end()) {
      ids[j] = found->second;
      continue;
    }
    insert.bind(1, names[j]);
    insert.exec();
    insert.reset();
    ids[j] = static_cast<std::int32_t>(sql.getLastInsertRowid());
    ++added;
  }
  return ids;
}

// Marks stale every window not stale yet whose dates [first_date, as_of] hold a changed
// date, and returns how many of them belong to a model's current version: a superseded
// version's windows are marked too (their numbers no longer match the returns), but no
// refresh refits them, so they are not counted as work for the next refresh.
std::size_t mark_stale(SQLite::Database& sql, std::vector<std::int32_t> changed) {
  if (changed.empty()) return 0;
  std::sort(changed.begin(), changed.end());
  std::vector<long long> hit;
  std::size_t current = 0;
  SQLite::Statement windows(sql,
                            "SELECT w.id, w.first_date, w.as_of, v.version = (SELECT max(version) FROM model_versions "
                            "WHERE model_id = v.model_id) FROM windows w JOIN model_versions v ON v.id = w.model_version_id "
                            "WHERE w.stale = 0 AND w.as_of >= ? AND w.first_date <= ?");
  windows.bind(1, changed.front());
  windows.bind(2, changed.back());
  while (windows.executeStep()) {
    const auto first = windows.getColumn(1).getInt();
    const auto last = windows.getColumn(2).getInt();
    const auto at = std::lower_bound(changed.begin(), changed.end(), first);
    if (at != changed.end() && *at <= last) {
      hit.push_back(windows.getColumn(0).getInt64());
      current += windows.getColumn(3).getInt() != 0;
    }
  }
  SQLite::Statement mark(sql, "UPDATE windows SET stale = 1 WHERE id = ?");
  for (long long id : hit) {
    mark.bind(1, static_cast<std::int64_t>(id));
    mark.exec();
    mark.reset();
  }
  return current;
}

}  // namespace

const char* to_string(ValuesInFile values) {
  switch (values) {
    case ValuesInFile::prices_to_simple_returns: return "prices (simple returns)";
    case ValuesInFile::prices_to_log_returns: return "prices (log returns)";
    case ValuesInFile::returns: break;
  }
  return "returns";
}

LoadSummary store_returns(Database& db, const engine::ReturnsPanel& panel, const IngestSource& source) {
  const auto start = std::chrono::steady_clock::now();
  SQLite::Database& sql = db.sql();
  LoadSummary summary;
  summary.dates_in_file = panel.dates.size();
  summary.assets_in_file = panel.assets.size();
  if (!panel.dates.empty()) summary.first_date = panel.dates.front(), summary.last_date = panel.dates.back();

  SQLite::Transaction transaction(sql, SQLite::TransactionBehavior::IMMEDIATE);
  if (const SQLite::Column latest = sql.execAndGet("SELECT max(date) FROM returns"); !latest.isNull())
    summary.latest_before = stored_date(latest.getInt());
  const std::vector<std::int32_t> ids = asset_ids(sql, panel.assets, summary.new_assets);
  // Visit the panel's columns in ascending id order so each date's entries come sorted.
  std::vector<std::size_t> by_id(ids.size());
  std::iota(by_id.begin(), by_id.end(), std::size_t{0});
  std::sort(by_id.begin(), by_id.end(), [&](std::size_t a, std::size_t b) { return ids[a] < ids[b]; });

  // Per asset: the first and last date the file gives it a value on.
  std::vector<std::int32_t> first_seen(ids.size(), 0), last_seen(ids.size(), 0);
  std::vector<std::int32_t> changed_dates;
  std::vector<Correction> corrections;
  detail::CrossSection stored, merged;
  detail::CrossSectionReader reader(sql);
  detail::CrossSectionWriter writer(sql);

  for (Eigen::Index t = 0; t < panel.periods(); ++t) {
    const std::int32_t date = panel.dates[static_cast<std::size_t>(t)].key();
    const bool date_stored = reader.read(date, stored);
    merged.clear();
    std::size_t s = 0, added = 0, corrected = 0;
    const double* row = panel.values.data() + t * panel.width();
    for (std::size_t j : by_id) {
      const double value = row[j];
      if (std::isnan(value)) continue;
      if (first_seen[j] == 0) first_seen[j] = date;
      last_seen[j] = date;
      const std::int32_t id = ids[j];
      while (s < stored.ids.size() && stored.ids[s] < id) merged.push(stored.ids[s], stored.values[s]), ++s;
      if (s < stored.ids.size() && stored.ids[s] == id) {
        if (std::memcmp(&stored.values[s], &value, sizeof value) != 0) {
          corrections.push_back({date, id, stored.values[s], value});
          ++corrected;
        } else {
          ++summary.values_unchanged;
        }
        ++s;
      } else {
        ++added;
      }
      merged.push(id, value);
    }
    for (; s < stored.ids.size(); ++s) merged.push(stored.ids[s], stored.values[s]);
    if (added + corrected == 0) continue;
    if (!date_stored) {
      ++summary.dates_new;
      if (!summary.latest_before || date > summary.latest_before->key()) summary.moved_forward = true;
    }
    summary.values_new += added;
    summary.values_corrected += corrected;
    writer.write(date, merged);
    // Added values change a stored window as much as corrected ones do (a new asset's
    // history, a date filled in late), so both mark the windows covering the date.
    changed_dates.push_back(date);
  }

  SQLite::Statement span(sql,
                         "UPDATE assets SET first_date = min(coalesce(first_date, ?2), ?2), "
                         "last_date = max(coalesce(last_date, ?3), ?3) WHERE id = ?1");
  for (std::size_t j = 0; j < ids.size(); ++j) {
    if (first_seen[j] == 0) continue;
    span.bind(1, ids[j]);
    span.bind(2, first_seen[j]);
    span.bind(3, last_seen[j]);
    span.exec();
    span.reset();
  }

  summary.outcome = summary.values_corrected > 0 ? "correction"
                    : summary.values_new > 0     ? "new data"
                                                 : "no change";
  summary.windows_marked_stale = mark_stale(sql, changed_dates);
  summary.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();

  SQLite::Statement run(sql,
                        "INSERT INTO ingest_runs (file_name, content_sha256, loaded_at, layout, values_in_file, "
                        "data_rows, first_date, last_date, values_new, values_unchanged, values_corrected, "
                        "outcome, seconds) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)");
  run.bind(1, source.path);
  run.bind(2, source.content_sha256);
  run.bind(3, utc_timestamp());
  run.bind(4, source.layout);
  run.bind(5, source.values_in_file);
  run.bind(6, static_cast<std::int64_t>(source.data_rows));
  if (panel.dates.empty()) {
    run.bind(7);
    run.bind(8);
  } else {
    run.bind(7, summary.first_date.key());
    run.bind(8, summary.last_date.key());
  }
  run.bind(9, static_cast<std::int64_t>(summary.values_new));
  run.bind(10, static_cast<std::int64_t>(summary.values_unchanged));
  run.bind(11, static_cast<std::int64_t>(summary.values_corrected));
  run.bind(12, summary.outcome);
  run.bind(13, summary.seconds);
  run.exec();
  summary.run_id = static_cast<long>(sql.getLastInsertRowid());

  SQLite::Statement audit(sql, "INSERT INTO corrections (run_id, date, asset_id, old_value, new_value) VALUES (?, ?, ?, ?, ?)");
  for (const Correction& c : corrections) {
    audit.bind(1, static_cast<std::int64_t>(summary.run_id));
    audit.bind(2, c.date);
    audit.bind(3, c.asset);
    audit.bind(4, c.old_value);
    audit.bind(5, c.new_value);
    audit.exec();
    audit.reset();
  }
  transaction.commit();
  summary.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return summary;
}

}  // namespace factorwatch::storage
