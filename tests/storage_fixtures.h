// Shared pieces of the storage and command-line tests: a temporary data directory, files
// written from a panel, and running the real factorwatch command.
#pragma once

#include <sys/wait.h>
#include <unistd.h>

#include <array>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <stdexcept>
#include <string>
#include <vector>

#include "factorwatch/engine/panel.h"

namespace factorwatch::testing {

// A fresh directory under the system temp directory, removed with its content.
class TempDir {
 public:
  TempDir() {
    std::string pattern = (std::filesystem::temp_directory_path() / "factorwatch-test-XXXXXX").string();
    path_ = ::mkdtemp(pattern.data()) ? pattern : std::string();
  }
  ~TempDir() {
    std::error_code ignored;
    if (!path_.empty()) std::filesystem::remove_all(path_, ignored);
  }
  TempDir(const TempDir&) = delete;
  TempDir& operator=(const TempDir&) = delete;
  const std::string& path() const { return path_; }
  std::string file(const std::string& name) const { return path_ + "/" + name; }
  std::string database() const { return file("factorwatch.db"); }

 private:
  std::string path_;
};

// Monday-to-Friday dates from `first` (a Monday). A long run starts earlier: a returns
// file may not hold a date after today.
inline std::vector<engine::Date> business_dates(int count, const char* first = "2021-01-04") {
  std::vector<engine::Date> out;
  engine::Date d = *engine::Date::from_iso(first);
  if (d.weekday() != 0) throw std::invalid_argument(std::string("business_dates: ") + first + " is not a Monday");
  for (int weekday = 0; static_cast<int>(out.size()) < count; weekday = (weekday + 1) % 7) {  // 0 = Monday
    if (weekday < 5) out.push_back(d);
    d = engine::Date::from_days(d.days() + 1);
  }
  return out;
}

// A date written in a test; the test is wrong when it is not one.
inline engine::Date day(const char* iso) {
  const auto d = engine::Date::from_iso(iso);
  if (!d) throw std::invalid_argument(std::string("test date '") + iso + "' is not a date");
  return *d;
}

// Dates written as text (a generated universe's calendar, a reference file's column).
inline std::vector<engine::Date> dates_of(const std::vector<std::string>& iso) {
  std::vector<engine::Date> out;
  out.reserve(iso.size());
  for (const std::string& text : iso) out.push_back(day(text.c_str()));
  return out;
}

// The dates as text, for files and command lines a test writes.
inline std::vector<std::string> iso_texts(const std::vector<engine::Date>& dates) {
  std::vector<std::string> out;
  out.reserve(dates.size());
  for (engine::Date d : dates) out.push_back(d.iso());
  return out;
}

// Long layout, %.17g so that every double reads back exactly; gaps are left out.
inline void write_long_csv(const std::string& path, const engine::ReturnsPanel& panel) {
  std::ofstream out(path);
  out << "date,asset,return\n";
  char number[40];
  for (Eigen::Index t = 0; t < panel.periods(); ++t)
    for (Eigen::Index i = 0; i < panel.width(); ++i) {
      const double v = panel.values(t, i);
      if (v != v) continue;
      std::snprintf(number, sizeof number, "%.17g", v);
      out << panel.dates[static_cast<std::size_t>(t)].iso() << ',' << panel.assets[static_cast<std::size_t>(i)] << ','
          << number << '\n';
    }
}

inline void write_text(const std::string& path, const std::string& text) { std::ofstream(path) << text; }

inline std::string read_bytes(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  return std::string(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
}

struct CommandResult {
  int status = -1;
  std::string out;  // standard output
  std::string err;  // standard error
};

// The command the end-to-end tests run: the one built with them, unless
// FACTORWATCH_TEST_COMMAND names another (e.g. an older build, to show that a regression
// test fails on the code before its fix).
inline std::string factorwatch_command() {
  const char* other = std::getenv("FACTORWATCH_TEST_COMMAND");
  return other && *other ? other : FACTORWATCH_COMMAND;
}

// Runs a shell command line (through /bin/sh, as popen does) with its standard error sent
// to `err_file`, which is read and then removed; stdout, stderr and the exit code (-1 when
// the line could not start or did not exit normally).
inline CommandResult run_shell(const std::string& line, const std::string& err_file) {
  CommandResult r;
  const std::string command = "{ " + line + "; } 2>'" + err_file + "'";
  FILE* pipe = ::popen(command.c_str(), "r");
  if (!pipe) return r;
  std::array<char, 4096> buffer{};
  std::size_t n = 0;
  while ((n = std::fread(buffer.data(), 1, buffer.size(), pipe)) > 0) r.out.append(buffer.data(), n);
  const int status = ::pclose(pipe);
  r.status = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  r.err = read_bytes(err_file);
  std::remove(err_file.c_str());
  return r;
}

// Runs `factorwatch ARGUMENTS` with FACTORWATCH_DATA=data_dir.
inline CommandResult run_factorwatch(const std::string& data_dir, const std::string& arguments) {
  return run_shell("FACTORWATCH_DATA='" + data_dir + "' " + factorwatch_command() + " " + arguments,
                   data_dir + "/.stderr");
}

}  // namespace factorwatch::testing
