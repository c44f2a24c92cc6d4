// Stored portfolios: one row per name, one holding set per (name, as-of date), the
// holdings of a set in file order (schema 6, docs/storage.md).
#include "factorwatch/storage/portfolios.h"

#include <SQLiteCpp/SQLiteCpp.h>
#include <sqlite3.h>

#include <cmath>
#include <optional>
#include <stdexcept>
#include <unordered_set>

#include "cell_parse.h"
#include "factorwatch/storage/date_key.h"
#include "factorwatch/storage/identifier_rule.h"
#include "factorwatch/storage/timestamps.h"
#include "holdings_file.h"

namespace factorwatch::storage {
namespace {

// A date argument as stored (yyyymmdd); none means no limit.
std::int32_t date_limit(std::optional<engine::Date> as_of) { return as_of ? as_of->key() : 99991231; }

// What parse_portfolio_text guarantees, checked again because a Portfolio may also be
// built in code (the HTTP layer): a stored set must read back as a valid file would.
void check_storable(const Portfolio& p) {
  auto fail = [](const std::string& problem) { throw std::invalid_argument(problem); };
  if (!is_portfolio_name(p.name))
    fail("portfolio name '" + p.name + "': use 1 to 64 letters, digits, '.', '_' or '-'");
  if (!p.benchmark.empty() && !is_portfolio_name(p.benchmark))
    fail("benchmark name '" + p.benchmark + "': use 1 to 64 letters, digits, '.', '_' or '-'");
  if (p.benchmark == p.name) fail("portfolio '" + p.name + "' cannot be its own benchmark");
  if (p.holdings.empty()) fail("portfolio '" + p.name + "' has no holdings");
  std::unordered_set<std::string> seen;
  for (const engine::Holding& h : p.holdings) {
    if (auto problem = identifier_problem(h.asset))
      fail("portfolio '" + p.name + "': the asset name " + *problem);
    if (!seen.insert(h.asset).second)
      fail("portfolio '" + p.name + "': asset " + detail::quoted(h.asset) + " appears twice");
    if (const std::string problem = weight_problem(h.weight); !problem.empty())
      fail("portfolio '" + p.name + "': the weight of asset " + detail::quoted(h.asset) + " " + problem);
  }
}

// A read transaction, so that a set and its holdings come from one snapshot even while a
// writer replaces them; none when the caller already has a transaction open (SQLite does
// not nest them, and the caller's already gives one snapshot).
void open_snapshot(SQLite::Database& sql, std::optional<SQLite::Transaction>& snapshot) {
  if (sqlite3_get_autocommit(sql.getHandle()) != 0) snapshot.emplace(sql, SQLite::TransactionBehavior::DEFERRED);
}

std::int64_t portfolio_id(SQLite::Database& sql, const std::string& name) {
  SQLite::Statement q(sql, "SELECT id FROM portfolios WHERE name = ?");
  q.bind(1, name);
  return q.executeStep() ? q.getColumn(0).getInt64() : 0;
}

engine::Holdings read_holdings(SQLite::Database& sql, std::int64_t set_id) {
  SQLite::Statement q(sql, "SELECT asset, weight FROM holdings WHERE set_id = ? ORDER BY position");
  q.bind(1, set_id);
  engine::Holdings out;
  while (q.executeStep()) out.push_back({q.getColumn(0).getString(), q.getColumn(1).getDouble()});
  return out;
}

}  // namespace

SavePortfolioOutcome save_portfolio(Database& db, const Portfolio& portfolio) {
  check_storable(portfolio);
  engine::Holdings holdings = portfolio.holdings;
  for (engine::Holding& h : holdings) h.weight = detail::stored_weight(h.weight);
  // Recomputed rather than trusted: the stored hash always describes the stored rows.
  const std::string hash = detail::holdings_sha256(holdings, portfolio.benchmark);
  const std::int32_t as_of = portfolio.as_of.key();

  SQLite::Database& sql = db.sql();
  SQLite::Transaction transaction(sql, SQLite::TransactionBehavior::IMMEDIATE);
  SavePortfolioOutcome outcome;
  {
    SQLite::Statement known(sql, "SELECT 1 FROM assets WHERE name = ?");
    for (const engine::Holding& h : holdings) {
      known.bind(1, h.asset);
      if (!known.executeStep()) ++outcome.unknown_assets;
      known.reset();
    }
  }

  std::int64_t id = portfolio_id(sql, portfolio.name);
  if (id == 0) {
    SQLite::Statement insert(sql, "INSERT INTO portfolios (name, created_at) VALUES (?, ?)");
    insert.bind(1, portfolio.name);
    insert.bind(2, utc_timestamp());
    insert.exec();
    id = sql.getLastInsertRowid();
    outcome.created = true;
  }

  std::int64_t set_id = 0;
  {
    SQLite::Statement q(sql, "SELECT id, content_sha256 FROM holding_sets WHERE portfolio_id = ? AND as_of = ?");
    q.bind(1, id);
    q.bind(2, as_of);
    if (q.executeStep()) {
      if (q.getColumn(1).getString() == hash) {
        outcome.unchanged = true;
        return outcome;  // nothing written; the transaction rolls back an empty change
      }
      set_id = q.getColumn(0).getInt64();
      outcome.replaced = true;
    }
  }

  const std::string now = utc_timestamp();
  if (set_id != 0) {
    SQLite::Statement clear(sql, "DELETE FROM holdings WHERE set_id = ?");
    clear.bind(1, set_id);
    clear.exec();
    SQLite::Statement update(sql,
                             "UPDATE holding_sets SET benchmark = ?, source = ?, content_sha256 = ?, stored_at = ? "
                             "WHERE id = ?");
    if (portfolio.benchmark.empty()) update.bind(1); else update.bind(1, portfolio.benchmark);
    update.bind(2, portfolio.source);
    update.bind(3, hash);
    update.bind(4, now);
    update.bind(5, set_id);
    update.exec();
  } else {
    SQLite::Statement insert(sql,
                             "INSERT INTO holding_sets (portfolio_id, as_of, benchmark, source, content_sha256, "
                             "stored_at) VALUES (?, ?, ?, ?, ?, ?)");
    insert.bind(1, id);
    insert.bind(2, as_of);
    if (portfolio.benchmark.empty()) insert.bind(3); else insert.bind(3, portfolio.benchmark);
    insert.bind(4, portfolio.source);
    insert.bind(5, hash);
    insert.bind(6, now);
    insert.exec();
    set_id = sql.getLastInsertRowid();
  }

  SQLite::Statement row(sql, "INSERT INTO holdings (set_id, position, asset, weight) VALUES (?, ?, ?, ?)");
  for (std::size_t i = 0; i < holdings.size(); ++i) {
    row.bind(1, set_id);
    row.bind(2, static_cast<std::int64_t>(i));
    row.bind(3, holdings[i].asset);
    row.bind(4, holdings[i].weight);
    row.exec();
    row.reset();
  }
  transaction.commit();
  return outcome;
}

std::optional<Portfolio> read_portfolio(Database& db, const std::string& name, std::optional<engine::Date> as_of) {
  const std::int32_t limit = date_limit(as_of);
  SQLite::Database& sql = db.sql();
  std::optional<SQLite::Transaction> snapshot;
  open_snapshot(sql, snapshot);
  SQLite::Statement q(sql,
                      "SELECT s.id, s.as_of, s.benchmark, s.source, s.content_sha256, s.stored_at "
                      "FROM holding_sets s JOIN portfolios p ON p.id = s.portfolio_id "
                      "WHERE p.name = ? AND s.as_of <= ? ORDER BY s.as_of DESC LIMIT 1");
  q.bind(1, name);
  q.bind(2, limit);
  if (!q.executeStep()) return std::nullopt;
  Portfolio p;
  p.name = name;
  p.as_of = stored_date(q.getColumn(1).getInt64());
  p.benchmark = q.getColumn(2).isNull() ? "" : q.getColumn(2).getString();
  p.source = q.getColumn(3).getString();
  p.content_sha256 = q.getColumn(4).getString();
  p.stored_at = q.getColumn(5).getString();
  p.holdings = read_holdings(sql, q.getColumn(0).getInt64());
  return p;
}

std::vector<PortfolioSummary> list_portfolios(Database& db) {
  SQLite::Database& sql = db.sql();
  std::optional<SQLite::Transaction> snapshot;
  open_snapshot(sql, snapshot);
  SQLite::Statement q(sql,
                      "SELECT p.name, s.id, s.as_of, s.benchmark, s.stored_at, "
                      "(SELECT count(*) FROM holding_sets WHERE portfolio_id = p.id) "
                      "FROM portfolios p JOIN holding_sets s ON s.portfolio_id = p.id "
                      "WHERE s.as_of = (SELECT max(as_of) FROM holding_sets WHERE portfolio_id = p.id) "
                      "ORDER BY p.name");
  std::vector<PortfolioSummary> out;
  while (q.executeStep()) {
    PortfolioSummary s;
    s.name = q.getColumn(0).getString();
    s.latest_as_of = stored_date(q.getColumn(2).getInt64());
    s.benchmark = q.getColumn(3).isNull() ? "" : q.getColumn(3).getString();
    s.stored_at = q.getColumn(4).getString();
    s.dates = static_cast<std::size_t>(q.getColumn(5).getInt64());
    // Summed here in file order, as the risk report sums them, so the two agree exactly.
    const engine::Holdings holdings = read_holdings(sql, q.getColumn(1).getInt64());
    s.holdings = holdings.size();
    for (const engine::Holding& h : holdings) s.net += h.weight, s.gross += std::abs(h.weight);
    out.push_back(std::move(s));
  }
  return out;
}

std::vector<engine::Date> portfolio_dates(Database& db, const std::string& name) {
  SQLite::Statement q(db.sql(),
                      "SELECT s.as_of FROM holding_sets s JOIN portfolios p ON p.id = s.portfolio_id "
                      "WHERE p.name = ? ORDER BY s.as_of");
  q.bind(1, name);
  std::vector<engine::Date> out;
  while (q.executeStep()) out.push_back(stored_date(q.getColumn(0).getInt64()));
  return out;
}

std::size_t delete_portfolio(Database& db, const std::string& name, std::optional<engine::Date> as_of) {
  const std::int32_t date = as_of ? as_of->key() : 0;
  SQLite::Database& sql = db.sql();
  SQLite::Transaction transaction(sql, SQLite::TransactionBehavior::IMMEDIATE);
  const std::int64_t id = portfolio_id(sql, name);
  if (id == 0) return 0;
  std::size_t removed = 0;
  if (!as_of) {
    SQLite::Statement count(sql, "SELECT count(*) FROM holding_sets WHERE portfolio_id = ?");
    count.bind(1, id);
    count.executeStep();
    removed = static_cast<std::size_t>(count.getColumn(0).getInt64());
  } else {
    SQLite::Statement drop(sql, "DELETE FROM holding_sets WHERE portfolio_id = ? AND as_of = ?");
    drop.bind(1, id);
    drop.bind(2, date);
    removed = static_cast<std::size_t>(drop.exec());
  }
  // A name without dates goes too, so that lists never show an empty portfolio. The
  // foreign keys cascade: the sets, then their holdings.
  SQLite::Statement left(sql, "SELECT count(*) FROM holding_sets WHERE portfolio_id = ?");
  left.bind(1, id);
  left.executeStep();
  if (!as_of || left.getColumn(0).getInt64() == 0) {
    SQLite::Statement drop(sql, "DELETE FROM portfolios WHERE id = ?");
    drop.bind(1, id);
    drop.exec();
  }
  transaction.commit();
  return removed;
}

}  // namespace factorwatch::storage
