// Files and permissions of the data directory (issue 13): the database and its -wal and
// -shm files owner-only whatever the umask, a 0-byte database refused rather than taken
// as a new one, the token written atomically and never through a symbolic link, and the
// reading commands working on a read-only data directory.
//
// Root ignores file modes, so read-only and full-disk cases use what does stop root: a
// read-only bind mount and a small tmpfs. Both need the mount permission (CAP_SYS_ADMIN);
// without it those tests are skipped, saying so.
#include <gtest/gtest.h>

#include <SQLiteCpp/SQLiteCpp.h>
#include <sys/mount.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <filesystem>
#include <fstream>

#include "factorwatch/storage/database.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/verify.h"
#include "simulated_model.h"
#include "storage_fixtures.h"

namespace {

using namespace factorwatch;
namespace fw = factorwatch::testing;
using fw::TempDir;

bool contains(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

unsigned mode_of(const std::string& path) {
  struct stat info {};
  if (::lstat(path.c_str(), &info) != 0) return 0;
  return info.st_mode & 07777;
}

bool exists(const std::string& path) {
  struct stat info {};
  return ::lstat(path.c_str(), &info) == 0;
}

// `factorwatch ARGUMENTS` on `data_dir` with its stderr kept in `scratch` (the data
// directory may be read-only or full).
fw::CommandResult run_on(const std::string& data_dir, const std::string& scratch, const std::string& arguments) {
  return fw::run_shell("FACTORWATCH_DATA='" + data_dir + "' " + fw::factorwatch_command() + " " + arguments,
                       scratch + "/.stderr");
}

// A mount made for one test and undone with it.
class Mount {
 public:
  ~Mount() {
    if (!target_.empty()) ::umount2(target_.c_str(), MNT_DETACH);
  }
  // A read-only view of `source` at `target`; false (with the reason) when not permitted.
  bool read_only_bind(const std::string& source, const std::string& target) {
    if (::mount(source.c_str(), target.c_str(), nullptr, MS_BIND, nullptr) != 0) return refused();
    target_ = target;
    if (::mount(nullptr, target.c_str(), nullptr, MS_BIND | MS_REMOUNT | MS_RDONLY, nullptr) != 0) return refused();
    return true;
  }
  bool tmpfs(const std::string& target, const std::string& options) {
    if (::mount("tmpfs", target.c_str(), "tmpfs", 0, options.c_str()) != 0) return refused();
    target_ = target;
    return true;
  }
  const std::string& reason() const { return reason_; }

 private:
  bool refused() {
    reason_ = std::string("mount not permitted here: ") + std::strerror(errno);
    return false;
  }
  std::string target_, reason_;
};

// The reproduction: in an existing data directory the files came out 0644. Checked with
// the usual umask 022 and the database open, so that the -wal and -shm files exist.
TEST(DataFiles, NewDatabaseFilesAreOwnerOnlyWhateverTheUmask) {
  TempDir dir;
  ::chmod(dir.path().c_str(), 0755);  // a directory the user made, readable by others
  const mode_t old_umask = ::umask(022);
  {
    storage::Database db(dir.database());
    storage::ModelConfig c;
    c.fit.factors = 1;
    c.window = 20;
    storage::set_model(db, "m", c);  // a write: -wal and -shm in use
    for (const char* suffix : {"", "-wal", "-shm"}) {
      const std::string path = dir.database() + suffix;
      ASSERT_TRUE(exists(path)) << path;
      EXPECT_EQ(mode_of(path), 0600u) << path;
    }
  }
  ::umask(old_umask);
  // Nothing of the creation is left beside it.
  for (const auto& entry : std::filesystem::directory_iterator(dir.path()))
    EXPECT_TRUE(entry.path().filename().string().rfind("factorwatch.db", 0) == 0 &&
                !contains(entry.path().filename().string(), ".new-"))
        << entry.path();
}

// Two connections creating the same new file at once get one database.
TEST(DataFiles, CreatingTheSameDatabaseTwiceGivesOne) {
  TempDir dir;
  storage::Database a(dir.database());
  storage::Database b(dir.database());
  storage::ModelConfig c;
  c.fit.factors = 1;
  c.window = 20;
  storage::set_model(a, "m", c);
  EXPECT_TRUE(storage::find_model(b, "m"));
}

// The reproduction: a 0-byte factorwatch.db (a truncated copy, a failed restore) was
// silently taken as a new, empty database.
TEST(DataFiles, AZeroByteDatabaseIsRefusedNotTakenAsNew) {
  TempDir dir;
  fw::write_text(dir.database(), "");
  try {
    storage::Database db(dir.database());
    ADD_FAILURE() << "opened a 0-byte file as a database";
  } catch (const std::runtime_error& e) {
    EXPECT_TRUE(contains(e.what(), "empty file (0 bytes)")) << e.what();
    EXPECT_TRUE(contains(e.what(), dir.database())) << e.what();
  }
  const fw::CommandResult r = fw::run_factorwatch(dir.path(), "model list");
  EXPECT_EQ(r.status, 1);
  EXPECT_TRUE(contains(r.err, "truncated database")) << r.err;
  EXPECT_EQ(std::filesystem::file_size(dir.database()), 0u);  // left as found
}

// The reproduction: `token --renew` wrote through a symbolic link planted at
// access-token.new (and then put the link in the token's place).
TEST(DataFiles, TokenRenewNeverWritesThroughAPlantedLink) {
  TempDir dir, elsewhere;
  ASSERT_EQ(fw::run_factorwatch(dir.path(), "token").status, 0);
  const std::string victim = elsewhere.file("victim");
  fw::write_text(victim, "precious\n");
  ASSERT_EQ(::symlink(victim.c_str(), dir.file("access-token.new").c_str()), 0);
  const fw::CommandResult r = fw::run_factorwatch(dir.path(), "token --renew");
  EXPECT_EQ(r.status, 0) << r.err;
  EXPECT_EQ(fw::read_bytes(victim), "precious\n");
  const std::string token_file = dir.file("access-token");
  struct stat info {};
  ASSERT_EQ(::lstat(token_file.c_str(), &info), 0);
  EXPECT_TRUE(S_ISREG(info.st_mode));
  EXPECT_EQ(info.st_mode & 0777, 0600u);
  EXPECT_EQ(fw::read_bytes(token_file), r.out);  // the token printed is the one stored
}

// A token file that is a symbolic link would let whoever planted it choose the token.
TEST(DataFiles, ATokenFileThatIsALinkIsRefused) {
  TempDir dir, elsewhere;
  const std::string chosen = elsewhere.file("chosen");
  fw::write_text(chosen, std::string(64, 'a') + "\n");
  ASSERT_EQ(::symlink(chosen.c_str(), dir.file("access-token").c_str()), 0);
  const fw::CommandResult r = fw::run_factorwatch(dir.path(), "token");
  EXPECT_EQ(r.status, 1);
  EXPECT_TRUE(contains(r.err, "symbolic link")) << r.err;
  EXPECT_FALSE(contains(r.out, std::string(64, 'a')));
  ASSERT_EQ(fw::run_factorwatch(dir.path(), "token --renew").status, 0);  // the way out the message gives
  struct stat info {};
  ASSERT_EQ(::lstat(dir.file("access-token").c_str(), &info), 0);
  EXPECT_TRUE(S_ISREG(info.st_mode));
}

// The reproduction: a first start on a full disk left an empty token file, and every
// later start failed on it ("holds no token"). Now the failed write leaves nothing, and
// the next start, with space again, makes the token.
TEST(DataFiles, AFullDiskLeavesNoTokenFileAndTheNextStartMakesOne) {
  TempDir dir, scratch;
  Mount mount;
  // 64 KiB: a few pages, filled below; tmpfs counts whole pages.
  if (!mount.tmpfs(dir.path(), "size=64k,mode=0700")) GTEST_SKIP() << mount.reason();
  const std::string filler = dir.file("filler");
  {
    std::ofstream out(filler, std::ios::binary);
    const std::string block(4096, 'x');
    for (int i = 0; i < 64 && out; ++i) out.write(block.data(), static_cast<std::streamsize>(block.size()));
  }
  const fw::CommandResult full = run_on(dir.path(), scratch.path(), "token");
  EXPECT_EQ(full.status, 1);
  EXPECT_TRUE(contains(full.err, "cannot write")) << full.err;
  for (const auto& entry : std::filesystem::directory_iterator(dir.path()))
    EXPECT_EQ(entry.path().filename(), "filler") << "left behind: " << entry.path();

  ASSERT_EQ(::unlink(filler.c_str()), 0);
  const fw::CommandResult again = run_on(dir.path(), scratch.path(), "token");
  EXPECT_EQ(again.status, 0) << again.err;
  EXPECT_EQ(again.out.size(), 65u) << again.out;  // 64 hex digits and a newline
  EXPECT_EQ(fw::read_bytes(dir.file("access-token")), again.out);
  EXPECT_EQ(mode_of(dir.file("access-token")), 0600u);
}

// The reproduction: on a read-only data directory even reads failed ("unable to open
// database file"): WAL mode wants to create the -shm file. Reads now open the file
// read-only (immutable: nothing can write it there) and give the same output as on the
// writable directory; a write fails with a clear message.
TEST(DataFiles, ReadingCommandsWorkOnAReadOnlyDataDirectory) {
  TempDir dir, view, scratch;
  const engine::ReturnsPanel p = [] {
    engine::ReturnsPanel x = fw::simulate_planted_model(120, 12, 2, 5).panel;
    x.dates = fw::business_dates(120);
    return x;
  }();
  fw::write_long_csv(scratch.file("returns.csv"), p);
  ASSERT_EQ(run_on(dir.path(), scratch.path(), "load '" + scratch.file("returns.csv") + "'").status, 0);
  ASSERT_EQ(run_on(dir.path(), scratch.path(), "model set m --factors 2 --window 100 --step 10").status, 0);
  ASSERT_EQ(run_on(dir.path(), scratch.path(), "refresh m").status, 0);
  const std::vector<std::string> reads = {"windows m --format csv", "exposures m --format csv",
                                          "specific-risk m --format csv", "model show m", "verify"};
  std::vector<std::string> writable;
  for (const std::string& read : reads) {
    const fw::CommandResult r = run_on(dir.path(), scratch.path(), read);
    ASSERT_EQ(r.status, 0) << read << ": " << r.err;
    writable.push_back(r.out);
  }
  ASSERT_FALSE(exists(dir.database() + "-wal"));  // closed cleanly: the log was folded in

  Mount mount;
  if (!mount.read_only_bind(dir.path(), view.path())) GTEST_SKIP() << mount.reason();
  ASSERT_NE(::access(view.path().c_str(), W_OK), 0);
  for (std::size_t i = 0; i < reads.size(); ++i) {
    const fw::CommandResult r = run_on(view.path(), scratch.path(), reads[i]);
    EXPECT_EQ(r.status, 0) << reads[i] << ": " << r.err;
    if (reads[i] != "verify") {
      EXPECT_EQ(r.out, writable[i]) << reads[i];
    } else {
      EXPECT_TRUE(contains(r.out, "no problems")) << r.out;
    }
  }
  {
    storage::Database db(view.path() + "/factorwatch.db");
    EXPECT_TRUE(db.read_only());
    EXPECT_TRUE(db.immutable());
    EXPECT_TRUE(storage::verify_database(db).problems.empty());
  }
  const fw::CommandResult write = run_on(view.path(), scratch.path(), "model set m2 --factors 1 --window 50");
  EXPECT_NE(write.status, 0);
  EXPECT_TRUE(contains(write.err, "readonly") || contains(write.err, "read-only")) << write.err;
}

}  // namespace
