// Crash safety of the storage commands: the real `factorwatch` program is killed with
// SIGKILL (no destructor, no rollback, no checkpoint runs) at points spread over a run,
// and the database it leaves behind is held to the promises the headers make:
//   - ingest.h: a load is merged in one transaction, all or nothing;
//   - refresh.h: a killed refresh leaves only whole windows, and the next refresh resumes
//     to the very windows of an uninterrupted run.
//
// Kill timing varies from run to run (two cores, other jobs). Every check after a kill is
// an invariant that holds wherever the kill lands. The only timing-dependent requirement
// is that at least one kill landed inside the interesting phase (the load's open
// transaction, the refresh's run of windows); for the load some kills are triggered by
// the transaction's progress rather than by time, for the refresh further kill points
// are bisected until one lands inside, so a slow or fast machine does not fail the test.
#include <gtest/gtest.h>

#include <SQLiteCpp/SQLiteCpp.h>
#include <fcntl.h>
#include <signal.h>
#include <spawn.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <charconv>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <functional>
#include <map>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <thread>
#include <utility>
#include <vector>

#include "factorwatch/storage/content_hash.h"
#include "generator.h"
#include "storage_fixtures.h"

extern char** environ;

namespace {

namespace fs = std::filesystem;
using factorwatch::testing::TempDir;
using Clock = std::chrono::steady_clock;

// ---------------------------------------------------------------------------------------
// Running the command as a child process.

struct ChildExit {
  bool killed = false;  // died of our SIGKILL, i.e. was still running when it arrived
  int code = -1;        // exit code when it ended by itself
  double seconds = 0;   // from spawn to exit
};

// Starts FACTORWATCH_COMMAND with `args`, FACTORWATCH_DATA=data_dir, stdin from
// /dev/null and stdout/stderr into files in data_dir (kept for failure messages).
// posix_spawn rather than popen: the test needs the child's own pid to kill it, not a
// shell's.
pid_t spawn_factorwatch(const std::string& data_dir, const std::vector<std::string>& args) {
  std::vector<std::string> argv_text = {FACTORWATCH_COMMAND};
  argv_text.insert(argv_text.end(), args.begin(), args.end());
  std::vector<char*> argv;
  for (std::string& a : argv_text) argv.push_back(a.data());
  argv.push_back(nullptr);

  std::vector<std::string> env_text;
  for (char** e = environ; *e; ++e)
    if (std::strncmp(*e, "FACTORWATCH_DATA=", 17) != 0) env_text.emplace_back(*e);
  env_text.push_back("FACTORWATCH_DATA=" + data_dir);
  std::vector<char*> envp;
  for (std::string& e : env_text) envp.push_back(e.data());
  envp.push_back(nullptr);

  const std::string out = data_dir + "/child.out", err = data_dir + "/child.err";
  posix_spawn_file_actions_t files;
  posix_spawn_file_actions_init(&files);
  posix_spawn_file_actions_addopen(&files, 0, "/dev/null", O_RDONLY, 0);
  posix_spawn_file_actions_addopen(&files, 1, out.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
  posix_spawn_file_actions_addopen(&files, 2, err.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
  pid_t pid = -1;
  const int rc = ::posix_spawn(&pid, FACTORWATCH_COMMAND, &files, nullptr, argv.data(), envp.data());
  posix_spawn_file_actions_destroy(&files);
  return rc == 0 ? pid : -1;
}

ChildExit wait_child(pid_t pid, Clock::time_point started) {
  ChildExit r;
  int status = 0;
  while (::waitpid(pid, &status, 0) < 0 && errno == EINTR) {
  }
  r.seconds = std::chrono::duration<double>(Clock::now() - started).count();
  if (WIFSIGNALED(status)) r.killed = WTERMSIG(status) == SIGKILL;
  if (WIFEXITED(status)) r.code = WEXITSTATUS(status);
  return r;
}

ChildExit run_to_end(const std::string& data_dir, const std::vector<std::string>& args) {
  const auto started = Clock::now();
  const pid_t pid = spawn_factorwatch(data_dir, args);
  if (pid < 0) return {};
  return wait_child(pid, started);
}

// SIGKILL after `delay` seconds. The child is not reaped before the kill, so its pid
// cannot have been reused: a child that already finished is a zombie and the kill is a
// no-op, reported as killed = false.
ChildExit run_and_kill(const std::string& data_dir, const std::vector<std::string>& args, double delay) {
  const auto started = Clock::now();
  const pid_t pid = spawn_factorwatch(data_dir, args);
  if (pid < 0) return {};
  std::this_thread::sleep_until(started + std::chrono::duration<double>(delay));
  ::kill(pid, SIGKILL);
  return wait_child(pid, started);
}

// SIGKILL as soon as `ready()` holds (polled every half millisecond), or never if the
// child ends first. Polling with WNOHANG, and never killing after a successful reap,
// keeps the kill from reaching a reused pid.
ChildExit run_and_kill_when(const std::string& data_dir, const std::vector<std::string>& args,
                            const std::function<bool()>& ready) {
  const auto started = Clock::now();
  const pid_t pid = spawn_factorwatch(data_dir, args);
  if (pid < 0) return {};
  for (;;) {
    int status = 0;
    const pid_t done = ::waitpid(pid, &status, WNOHANG);
    if (done == pid) {
      ChildExit r;
      r.seconds = std::chrono::duration<double>(Clock::now() - started).count();
      if (WIFEXITED(status)) r.code = WEXITSTATUS(status);
      return r;
    }
    if (ready()) break;
    std::this_thread::sleep_for(std::chrono::microseconds(500));
  }
  ::kill(pid, SIGKILL);
  return wait_child(pid, started);
}

std::string child_log(const std::string& data_dir) {
  return "stdout:\n" + factorwatch::testing::read_bytes(data_dir + "/child.out") + "\nstderr:\n" +
         factorwatch::testing::read_bytes(data_dir + "/child.err");
}

// ---------------------------------------------------------------------------------------
// Looking at the database as SQLite sees it.

// Source: SQLite documentation, PRAGMA integrity_check: "If the integrity check finds
// no errors, a single row with the value 'ok' is returned."
std::string integrity_check(const std::string& db_path) {
  // Read-write: opening the file after a crash may have to rebuild the WAL index.
  SQLite::Database sql(db_path, SQLite::OPEN_READWRITE);
  SQLite::Statement q(sql, "PRAGMA integrity_check");
  std::string out;
  while (q.executeStep()) out += (out.empty() ? "" : "\n") + q.getColumn(0).getString();
  return out;
}

// FNV-1a, 64 bit (common practice): a digest to compare table contents between
// directories without keeping two copies of 37 MB in memory.
struct Digest {
  std::uint64_t h = 14695981039346656037ull;
  void add(const void* data, std::size_t n) {
    const auto* b = static_cast<const unsigned char*>(data);
    for (std::size_t i = 0; i < n; ++i) h = (h ^ b[i]) * 1099511628211ull;
  }
  // Length first, so that ("ab","c") and ("a","bc") differ.
  void add_field(const SQLite::Column& c) {
    const std::int64_t type = c.getType();
    add(&type, sizeof type);
    if (c.isNull()) return;
    if (c.isInteger()) {
      const std::int64_t v = c.getInt64();
      add(&v, sizeof v);
      return;
    }
    if (c.isFloat()) {
      const double v = c.getDouble();
      add(&v, sizeof v);
      return;
    }
    const std::int64_t n = c.getBytes();
    add(&n, sizeof n);
    add(c.getBlob(), static_cast<std::size_t>(n));
  }
};

std::uint64_t table_digest(SQLite::Database& sql, const std::string& select) {
  Digest d;
  SQLite::Statement q(sql, select);
  while (q.executeStep())
    for (int i = 0; i < q.getColumnCount(); ++i) d.add_field(q.getColumn(i));
  return d.h;
}

// What an ingest may change: the stored returns, the assets, the audit tables.
struct StoreState {
  std::uint64_t returns = 0, assets = 0, corrections = 0;
  long long values = 0;  // stored (date, asset) values
  long long ingest_runs = 0;
  bool operator==(const StoreState& o) const {
    return returns == o.returns && assets == o.assets && corrections == o.corrections && values == o.values &&
           ingest_runs == o.ingest_runs;
  }
};

std::ostream& operator<<(std::ostream& out, const StoreState& s) {
  return out << "{values " << s.values << ", ingest_runs " << s.ingest_runs << ", returns digest " << std::hex
             << s.returns << ", assets " << s.assets << ", corrections " << s.corrections << std::dec << "}";
}

StoreState store_state(const std::string& db_path) {
  SQLite::Database sql(db_path, SQLite::OPEN_READWRITE);
  StoreState s;
  s.returns = table_digest(sql, "SELECT date, asset_ids, returns FROM returns ORDER BY date");
  s.assets = table_digest(sql, "SELECT id, name, first_date, last_date FROM assets ORDER BY id");
  s.corrections = table_digest(sql, "SELECT * FROM corrections ORDER BY rowid");
  // asset_ids holds one int32 per stored value (migrations.cpp, table returns).
  s.values = sql.execAndGet("SELECT coalesce(sum(length(asset_ids)), 0) / 4 FROM returns").getInt64();
  s.ingest_runs = sql.execAndGet("SELECT count(*) FROM ingest_runs").getInt64();
  return s;
}

long long ingest_runs_of(const std::string& db_path, const std::string& sha256) {
  SQLite::Database sql(db_path, SQLite::OPEN_READWRITE);
  SQLite::Statement q(sql, "SELECT count(*) FROM ingest_runs WHERE content_sha256 = ?");
  q.bind(1, sha256);
  q.executeStep();
  return q.getColumn(0).getInt64();
}

std::uintmax_t file_size_or_zero(const std::string& path) {
  std::error_code ec;
  const auto n = fs::file_size(path, ec);
  return ec ? 0 : n;
}

// ---------------------------------------------------------------------------------------
// Kill points.

// Where a kill landed relative to the phase under test (a load's transaction, a
// refresh's run of windows).
enum class Landing { before, inside, after };

const char* to_string(Landing l) {
  return l == Landing::before ? "before" : l == Landing::inside ? "inside" : "after";
}

// Kills at each planned fraction of the measured duration; when none landed inside,
// bisects between a fraction that landed before and one that landed after, up to
// `extra` more attempts. Run times vary by a third from run to run under load, so the
// planned points need not be monotonic (a kill at 95% may land before one at 75% landed
// after): the bracket starts from the earliest "after" and the latest "before" below it,
// and each extra attempt moves one end, so repeated attempts never retry one point.
// `attempt` runs one whole case (fresh directory, kill, checks, completion) and says
// where its kill landed. Returns how many landed inside.
int kill_at_points(const std::vector<double>& planned, int extra, const std::function<Landing(double)>& attempt) {
  int inside = 0;
  auto one = [&](double fraction) {
    const Landing l = attempt(fraction);
    std::printf("  kill at %.0f%% of the measured run: landed %s\n", 100 * fraction, to_string(l));
    if (l == Landing::inside) ++inside;
    return l;
  };
  std::vector<std::pair<double, Landing>> seen;
  for (double f : planned) seen.emplace_back(f, one(f));
  double hi = 1.5;  // past 1: the killed run may be slower than the measured one
  for (const auto& [f, l] : seen)
    if (l == Landing::after) hi = std::min(hi, f);
  double lo = 0;
  for (const auto& [f, l] : seen)
    if (l == Landing::before && f < hi) lo = std::max(lo, f);
  for (int i = 0; i < extra && inside == 0 && !::testing::Test::HasFatalFailure(); ++i) {
    const double f = (lo + hi) / 2;
    const Landing l = one(f);
    if (l == Landing::before) lo = f;
    if (l == Landing::after) hi = f;
  }
  return inside;
}

// ---------------------------------------------------------------------------------------
// Ingest.

// Sizes: 2,000 assets x 1,500 dates = 3,000,000 rows (84 MB) load in 0.5-0.9 s on the
// 2-core development machine (about three quarters reading, one quarter storing): long
// enough to aim kills at both phases, short enough for 9 kills in a test program.
constexpr int kBigAssets = 2000, kBigDates = 1500;
// The first file: 20 dates x 10 assets, 5 of which the big file also holds with other
// values on those dates, so the big load merges into stored dates, corrects values
// (corrections table, ingest.h) and adds assets, all inside the transaction under test.
constexpr int kSmallDates = 20, kSmallOwnAssets = 5, kSmallSharedAssets = 5;

std::string big_asset(int a) {
  char name[16];
  std::snprintf(name, sizeof name, "BG-%04d", a + 1);
  return name;
}

// A deterministic value in [-0.05, 0.05] with 6 decimals, from (date, asset).
std::int64_t micro_return(std::uint64_t t, std::uint64_t a) {
  std::uint64_t z = t * 0x9E3779B97F4A7C15ull + a * 0xBF58476D1CE4E5B9ull + 0x94D049BB133111EBull;
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;  // splitmix64 finaliser (common practice)
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
  z ^= z >> 31;
  return static_cast<std::int64_t>(z % 100001) - 50000;
}

void append_micro(std::string& out, std::int64_t micro) {
  if (micro < 0) out += '-', micro = -micro;
  char digits[24];
  const auto end = std::to_chars(digits, digits + sizeof digits, micro).ptr;
  std::string text(digits, end);
  if (text.size() < 7) text.insert(0, 7 - text.size(), '0');
  out.append(text, 0, text.size() - 6);
  out += '.';
  out.append(text, text.size() - 6, 6);
}

// Long layout; returns the number of data rows.
long long write_big_file(const std::string& path, const std::vector<std::string>& dates) {
  std::FILE* f = std::fopen(path.c_str(), "wb");
  if (!f) return -1;
  std::string buffer = "date,asset,return\n";
  long long rows = 0;
  std::vector<std::string> names(kBigAssets);
  for (int a = 0; a < kBigAssets; ++a) names[static_cast<std::size_t>(a)] = big_asset(a);
  for (int t = 0; t < kBigDates; ++t) {
    for (int a = 0; a < kBigAssets; ++a) {
      buffer += dates[static_cast<std::size_t>(t)];
      buffer += ',';
      buffer += names[static_cast<std::size_t>(a)];
      buffer += ',';
      append_micro(buffer, micro_return(static_cast<std::uint64_t>(t), static_cast<std::uint64_t>(a)));
      buffer += '\n';
      ++rows;
    }
    if (buffer.size() > (1 << 20)) std::fwrite(buffer.data(), 1, buffer.size(), f), buffer.clear();
  }
  std::fwrite(buffer.data(), 1, buffer.size(), f);
  std::fclose(f);
  return rows;
}

void write_small_file(const std::string& path, const std::vector<std::string>& dates) {
  std::string text = "date,asset,return\n";
  for (int t = 0; t < kSmallDates; ++t) {
    for (int a = 0; a < kSmallOwnAssets + kSmallSharedAssets; ++a) {
      char name[16];
      if (a < kSmallOwnAssets) std::snprintf(name, sizeof name, "SM-%02d", a + 1);
      text += dates[static_cast<std::size_t>(t)] + "," +
              (a < kSmallOwnAssets ? std::string(name) : big_asset(a - kSmallOwnAssets)) + ",";
      // Offset by 1e-6 from the big file's value so that shared cells always differ.
      append_micro(text, micro_return(static_cast<std::uint64_t>(t), static_cast<std::uint64_t>(a)) / 2 + 1);
      text += '\n';
    }
  }
  factorwatch::testing::write_text(path, text);
}

// Guards the all-or-nothing promise of `factorwatch load` (ingest.h: "A valid file is
// merged in one transaction") against the harshest interruption, SIGKILL, at points
// spread over parsing, storing and committing: afterwards the file is intact, the big
// file is either wholly stored or wholly absent, and loading it again completes.
TEST(CrashSafety, KilledLoadLeavesTheFileWhollyStoredOrWhollyAbsent) {
  TempDir files;
  ASSERT_FALSE(files.path().empty());
  const std::vector<std::string> dates = factorwatch::testing::iso_texts(factorwatch::testing::business_dates(kBigDates));
  const std::string small = files.file("small.csv"), big = files.file("big.csv");
  write_small_file(small, dates);
  const long long big_rows = write_big_file(big, dates);
  ASSERT_EQ(big_rows, static_cast<long long>(kBigAssets) * kBigDates);
  const std::string big_sha = factorwatch::storage::file_sha256(big);

  // Reference: the same two loads, never interrupted.
  StoreState before_reference, full;
  double load_seconds = 0;
  std::uintmax_t full_bytes = 0;
  {
    TempDir ref;
    const ChildExit first = run_to_end(ref.path(), {"load", small});
    ASSERT_EQ(first.code, 0) << child_log(ref.path());
    before_reference = store_state(ref.database());
    const ChildExit second = run_to_end(ref.path(), {"load", big});
    ASSERT_EQ(second.code, 0) << child_log(ref.path());
    load_seconds = second.seconds;
    full = store_state(ref.database());
    // The clean exit checkpointed everything into the main file.
    full_bytes = file_size_or_zero(ref.database());
  }
  const long long overlap = static_cast<long long>(kSmallDates) * kSmallSharedAssets;
  ASSERT_EQ(before_reference.values, static_cast<long long>(kSmallDates) * (kSmallOwnAssets + kSmallSharedAssets));
  ASSERT_EQ(full.values, before_reference.values + big_rows - overlap);
  ASSERT_EQ(full.ingest_runs, 2);
  ASSERT_GT(full_bytes, 8u << 20);
  std::printf("uninterrupted load of %lld rows: %.2f s, database %.1f MB\n", big_rows, load_seconds,
              static_cast<double>(full_bytes) / 1e6);

  // One case: a fresh directory, the small file, the big load killed by `run_killed`,
  // the checks, and a load to completion.
  int killed_running = 0, inside = 0;
  auto one_case = [&](const std::string& label,
                      const std::function<ChildExit(const std::string& dir, const std::string& db)>& run_killed) {
    SCOPED_TRACE(label);
    TempDir dir;
    const std::string db = dir.database();
    const ChildExit first = run_to_end(dir.path(), {"load", small});
    ASSERT_EQ(first.code, 0) << child_log(dir.path());
    const StoreState before = store_state(db);
    EXPECT_EQ(before, before_reference);

    const ChildExit killed = run_killed(dir.path(), db);
    killed_running += killed.killed;
    if (!killed.killed) {
      EXPECT_EQ(killed.code, 0) << child_log(dir.path());
    }
    // Uncommitted pages the transaction spilled stay in the -wal file after a kill (the
    // preload's clean exit checkpointed and removed it): more than 1 MiB there means the
    // kill landed inside the open transaction.
    const std::uintmax_t wal_bytes = file_size_or_zero(db + "-wal");

    // Source: SQLite documentation, PRAGMA integrity_check.
    EXPECT_EQ(integrity_check(db), "ok");
    const StoreState after = store_state(db);
    const bool present = ingest_runs_of(db, big_sha) == 1;
    Landing landing = Landing::before;
    if (present) {
      // Wholly present (ingest.h): the run is recorded and every value is stored, the
      // same bytes as the uninterrupted load left.
      landing = Landing::after;
      EXPECT_EQ(after.values, before.values + big_rows - overlap);
      EXPECT_EQ(after.returns, full.returns);
      EXPECT_EQ(after.assets, full.assets);
      EXPECT_EQ(after.corrections, full.corrections);
      EXPECT_EQ(after.ingest_runs, 2);
    } else {
      // Wholly absent: returns, assets, audit tables all as before.
      landing = wal_bytes > (1u << 20) ? Landing::inside : Landing::before;
      EXPECT_EQ(after, before) << "the kill left part of the file";
    }
    std::printf("  %s: load %s after %.2f s, -wal %.1f MB, big file %s: landed %s\n", label.c_str(),
                killed.killed ? "killed" : "had finished", killed.seconds, static_cast<double>(wal_bytes) / 1e6,
                present ? "present" : "absent", to_string(landing));
    inside += landing == Landing::inside;

    // The next load completes and leaves what the uninterrupted one left; a repeated
    // file is recorded as a second run with nothing new (ingest.h), and exits 3: it
    // brings no new date.
    const ChildExit again = run_to_end(dir.path(), {"load", big});
    EXPECT_EQ(again.code, present ? 3 : 0) << child_log(dir.path());
    EXPECT_EQ(integrity_check(db), "ok");
    const StoreState final_state = store_state(db);
    EXPECT_EQ(final_state.returns, full.returns);
    EXPECT_EQ(final_state.assets, full.assets);
    EXPECT_EQ(final_state.corrections, full.corrections);
    EXPECT_EQ(final_state.values, full.values);
    EXPECT_EQ(final_state.ingest_runs, present ? 3 : 2);
    EXPECT_EQ(ingest_runs_of(db, big_sha), present ? 2 : 1);
  };

  // Kill points in time, from 10% to 95% of the measured run: reading takes about the
  // first three quarters (the database is not open yet), storing and committing the rest.
  for (double fraction : {0.10, 0.30, 0.50, 0.70, 0.85, 0.95}) {
    char label[64];
    std::snprintf(label, sizeof label, "kill at %.0f%% of the measured run", 100 * fraction);
    one_case(label, [&](const std::string& dir, const std::string&) {
      return run_and_kill(dir, {"load", big}, fraction * load_seconds);
    });
    if (HasFatalFailure()) return;
  }
  // Kill points in progress: the time points hit the storing phase only by luck, as run
  // times vary by a third under load while storing is a quarter of the run. The -wal
  // file grows while the transaction writes (it ends near the size of the database, every
  // page being new), so a kill once it holds a share of that size lands inside the open
  // transaction whatever the machine's speed.
  for (double share : {0.05, 0.50, 0.90}) {
    char label[64];
    std::snprintf(label, sizeof label, "kill when the -wal holds %.0f%% of the database", 100 * share);
    one_case(label, [&](const std::string& dir, const std::string& db) {
      const std::string wal = db + "-wal";
      const auto threshold = static_cast<std::uintmax_t>(share * static_cast<double>(full_bytes));
      return run_and_kill_when(dir, {"load", big}, [&] { return file_size_or_zero(wal) >= threshold; });
    });
    if (HasFatalFailure()) return;
  }
  // Without a kill inside the open transaction the test would only show that killing a
  // parser changes nothing.
  EXPECT_GE(inside, 1) << "no kill landed while the load's transaction was open";
  EXPECT_GE(killed_running, 1) << "every load finished before its kill";
}

// ---------------------------------------------------------------------------------------
// Refresh.

// Sizes: 220 assets (fewer than the 300-date window, so the covariance is full rank and
// ML stays on its cheap path), two years of dates, a window every 2 dates: 112 ML
// windows in 0.5-1 s on the 2-core development machine (a few ms each, so kills land
// between windows at fine grain), with listings, delistings and gaps so that windows
// differ in their assets and warm starts must match assets by name.
constexpr int kRefreshAssets = 220, kRefreshYears = 2, kWindow = 300, kStep = 2, kFactors = 4;

void write_wide_csv(const std::string& path, const factorwatch::demo::DemoUniverse& u) {
  std::string text = "date";
  for (const std::string& a : u.assets) text += "," + a;
  text += "\n";
  char number[40];
  for (Eigen::Index t = 0; t < u.values.rows(); ++t) {
    text += u.dates[static_cast<std::size_t>(t)].iso();
    for (Eigen::Index i = 0; i < u.values.cols(); ++i) {
      text += ',';
      const double v = u.values(t, i);
      if (std::isnan(v)) continue;  // an empty cell is a gap (returns_csv.h)
      std::snprintf(number, sizeof number, "%.17g", v);  // reads back exactly
      text += number;
    }
    text += '\n';
  }
  factorwatch::testing::write_text(path, text);
}

// A stored window: every column that the fit determines, as typed bytes. The timing
// columns (fit_seconds, total_seconds, fitted_at) and the row id are left out: they
// differ between any two runs.
using WindowRow = std::map<std::string, std::string>;

std::string column_bytes(const SQLite::Column& c) {
  if (c.isNull()) return "null";
  if (c.isInteger()) return "i" + std::to_string(c.getInt64());
  if (c.isFloat()) {
    const double v = c.getDouble();
    return "f" + std::string(reinterpret_cast<const char*>(&v), sizeof v);
  }
  return "b" + std::string(static_cast<const char*>(c.getBlob()), static_cast<std::size_t>(c.getBytes()));
}

std::vector<WindowRow> stored_windows(const std::string& db_path) {
  SQLite::Database sql(db_path, SQLite::OPEN_READWRITE);
  SQLite::Statement q(sql, "SELECT * FROM windows ORDER BY model_version_id, as_of");
  std::vector<WindowRow> rows;
  while (q.executeStep()) {
    WindowRow row;
    for (int i = 0; i < q.getColumnCount(); ++i) {
      const std::string name = q.getColumnName(i);
      if (name == "id" || name == "fit_seconds" || name == "total_seconds" || name == "fitted_at") continue;
      row[name] = column_bytes(q.getColumn(i));
    }
    rows.push_back(std::move(row));
  }
  return rows;
}

std::uint32_t le_u32(const std::string& b, std::size_t at) {
  std::uint32_t v = 0;
  for (int i = 3; i >= 0; --i) v = (v << 8) | static_cast<unsigned char>(b[at + static_cast<std::size_t>(i)]);
  return v;
}

long long as_integer(const std::string& typed) { return std::stoll(typed.substr(1)); }

// Checks a blob in the doubles layout of storage/src/blob_codec.h (u32 rows, u32 cols,
// then rows * cols float64) against the expected shape; cols < 0 / rows < 0 = any.
// Every blob ends in its checksum since schema 7 (blob_codec.h).
constexpr std::size_t kChecksumBytes = 8;

::testing::AssertionResult doubles_blob(const WindowRow& row, const std::string& column, long long rows,
                                        long long cols) {
  const std::string& typed = row.at(column);
  if (typed.empty() || typed[0] != 'b') return ::testing::AssertionFailure() << column << " is not a blob";
  const std::string b = typed.substr(1);
  if (b.size() < 8) return ::testing::AssertionFailure() << column << ": " << b.size() << " bytes, no shape";
  const std::uint32_t r = le_u32(b, 0), c = le_u32(b, 4);
  if ((rows >= 0 && r != rows) || (cols >= 0 && c != cols))
    return ::testing::AssertionFailure() << column << " is " << r << " x " << c << ", expected " << rows << " x "
                                         << cols;
  if (b.size() != 8 + 8 * std::size_t{r} * c + kChecksumBytes)
    return ::testing::AssertionFailure() << column << ": " << b.size() << " bytes for " << r << " x " << c;
  return ::testing::AssertionSuccess();
}

// Every blob of the row decodes to the size its asset count and factor count demand
// (layouts: storage/src/blob_codec.h, columns: storage/src/migrations.cpp).
void expect_whole_window(const WindowRow& row) {
  const std::string as_of = row.at("as_of");
  const long long n = as_integer(row.at("asset_count")), k = as_integer(row.at("factors"));
  SCOPED_TRACE("window as of " + as_of.substr(1));
  EXPECT_EQ(k, kFactors);
  EXPECT_GT(n, 0);
  EXPECT_EQ(row.at("assets").size(), 1 + 4 * static_cast<std::size_t>(n) + kChecksumBytes);  // int32 ids
  EXPECT_EQ(row.at("heywood").size(), 1 + static_cast<std::size_t>(n) + kChecksumBytes);     // one byte each
  EXPECT_TRUE(doubles_blob(row, "loadings", n, k));
  for (const char* vector : {"mean", "scale", "specific_variance", "communality", "uniqueness"})
    EXPECT_TRUE(doubles_blob(row, vector, n, 1));
  EXPECT_TRUE(doubles_blob(row, "factor_covariance", k, k));
  EXPECT_TRUE(doubles_blob(row, "explained_share", k, 1));
  EXPECT_TRUE(doubles_blob(row, "eigenvalues", -1, 1));
  const nlohmann::json stats = nlohmann::json::parse(row.at("statistics").substr(1), nullptr, false);
  ASSERT_FALSE(stats.is_discarded()) << "statistics is not JSON";
  EXPECT_EQ(stats.value("periods", -1), kWindow);
}

std::string describe_difference(const WindowRow& a, const WindowRow& b) {
  std::string out;
  for (const auto& [column, bytes] : a)
    if (!b.count(column) || b.at(column) != bytes) out += " " + column;
  return out.empty() ? " (none)" : out;
}

// `factorwatch windows NAME --format csv` lines that are windows (not the caution
// comment, not the header).
int csv_data_lines(const std::string& text) {
  std::istringstream in(text);
  std::string line;
  int lines = 0;
  while (std::getline(in, line))
    if (!line.empty() && line[0] != '#') ++lines;
  return std::max(0, lines - 1);
}

// Guards the resumption promise of `factorwatch refresh` (refresh.h: "a refresh killed
// at any point leaves only whole windows ... A resumed run warm-starts from the stored
// window, ... so both give the same windows"): after SIGKILL at points across the run,
// the stored windows are whole and a prefix of the uninterrupted run's, the product still
// reads them, and refreshing again ends with windows byte-identical to the uninterrupted
// run's. Byte identity, not a tolerance: warm starts are read back from the stored
// blobs, which hold the exact doubles the uninterrupted run kept in memory.
TEST(CrashSafety, KilledRefreshLeavesWholeWindowsAndResumesToTheSameWindows) {
  TempDir files;
  ASSERT_FALSE(files.path().empty());
  factorwatch::demo::DemoOptions options;
  options.assets = kRefreshAssets;
  options.years = kRefreshYears;
  const std::string returns = files.file("returns_wide.csv");
  write_wide_csv(returns, factorwatch::demo::generate_demo_universe(options));
  const std::vector<std::string> define = {"model",    "set", "crash", "--factors", std::to_string(kFactors),
                                           "--window", std::to_string(kWindow), "--step", std::to_string(kStep),
                                           "--method", "ml"};
  auto prepare = [&](const TempDir& dir) {
    const ChildExit load = run_to_end(dir.path(), {"load", returns});
    ASSERT_EQ(load.code, 0) << child_log(dir.path());
    const ChildExit model = run_to_end(dir.path(), define);
    ASSERT_EQ(model.code, 0) << child_log(dir.path());
  };

  // A: uninterrupted.
  TempDir a;
  ASSERT_NO_FATAL_FAILURE(prepare(a));
  const ChildExit uninterrupted = run_to_end(a.path(), {"refresh", "crash", "--quiet"});
  ASSERT_EQ(uninterrupted.code, 0) << child_log(a.path());
  const double refresh_seconds = uninterrupted.seconds;
  const std::vector<WindowRow> reference = stored_windows(a.database());
  ASSERT_GE(reference.size(), 50u);
  for (const WindowRow& row : reference) expect_whole_window(row);
  const auto reference_exposures = factorwatch::testing::run_factorwatch(a.path(), "exposures crash --format csv");
  ASSERT_EQ(reference_exposures.status, 0) << reference_exposures.err;
  std::printf("uninterrupted refresh of %zu windows: %.2f s\n", reference.size(), refresh_seconds);

  // B: killed, checked, resumed, compared; a fresh directory per kill point.
  const int inside = kill_at_points({0.15, 0.40, 0.65, 0.90}, 4, [&](double fraction) {
    TempDir b;
    prepare(b);
    if (::testing::Test::HasFatalFailure()) return Landing::after;
    const ChildExit killed = run_and_kill(b.path(), {"refresh", "crash", "--quiet"}, fraction * refresh_seconds);
    SCOPED_TRACE("kill at " + std::to_string(fraction) + (killed.killed ? " (running)" : " (had finished)"));
    if (!killed.killed) {
      EXPECT_EQ(killed.code, 0) << child_log(b.path());
    }

    // Source: SQLite documentation, PRAGMA integrity_check.
    EXPECT_EQ(integrity_check(b.database()), "ok");
    const std::vector<WindowRow> partial = stored_windows(b.database());
    EXPECT_LE(partial.size(), reference.size());
    // Windows are fitted in date order, each committed alone (refresh.h): what a kill
    // leaves is the uninterrupted run's first windows, each one whole and identical.
    for (std::size_t i = 0; i < partial.size() && i < reference.size(); ++i) {
      expect_whole_window(partial[i]);
      // EXPECT_TRUE, not EXPECT_EQ: printing two maps of blobs would bury the message.
      EXPECT_TRUE(partial[i] == reference[i]) << "window " << i << " differs in"
                                              << describe_difference(partial[i], reference[i]);
    }
    // The product itself reads what the kill left.
    const auto listed = factorwatch::testing::run_factorwatch(b.path(), "windows crash --format csv");
    EXPECT_EQ(listed.status, 0) << listed.err;
    EXPECT_EQ(csv_data_lines(listed.out), static_cast<int>(partial.size()));

    // Resume to completion: the same windows as A, byte for byte.
    const ChildExit resumed = run_to_end(b.path(), {"refresh", "crash", "--quiet"});
    EXPECT_EQ(resumed.code, 0) << child_log(b.path());
    EXPECT_EQ(integrity_check(b.database()), "ok");
    const std::vector<WindowRow> complete = stored_windows(b.database());
    EXPECT_EQ(complete.size(), reference.size());
    for (std::size_t i = 0; i < complete.size() && i < reference.size(); ++i)
      EXPECT_TRUE(complete[i] == reference[i]) << "window " << i << " (as of " << reference[i].at("as_of").substr(1)
                                           << ") differs after resuming in" << describe_difference(complete[i], reference[i]);
    const auto exposures = factorwatch::testing::run_factorwatch(b.path(), "exposures crash --format csv");
    EXPECT_EQ(exposures.status, 0) << exposures.err;
    EXPECT_EQ(exposures.out, reference_exposures.out);

    std::printf("  %zu of %zu windows stored when killed\n", partial.size(), reference.size());
    if (partial.empty()) return Landing::before;
    return partial.size() < reference.size() ? Landing::inside : Landing::after;
  });
  // Only a kill between the first and the last window tests resumption at all.
  EXPECT_GE(inside, 1) << "no kill landed between the first and the last window";
}

}  // namespace
