// The layer rules of DEVELOPERS.md, checked on what the build produced and on the sources:
// surfaces (server/) -> pipeline -> storage -> engine, with storage persisting and reading
// only. A rule broken by a later change fails here, naming the symbol or the line.
//
// Link level: every object of the storage archive is listed with `nm`; none of its
// undefined symbols may be one the engine's algorithm archive defines (an estimator,
// rotation, alignment, drift, scores, risk). Storage links the engine's value types only
// (engine/CMakeLists.txt), so a program that pulled such an object would also fail to link;
// this check does not wait for a program to pull it.
#include <gtest/gtest.h>

#include <cstdio>
#include <cxxabi.h>
#include <filesystem>
#include <fstream>
#include <memory>
#include <regex>
#include <set>
#include <sstream>
#include <string>
#include <vector>

namespace {

namespace fs = std::filesystem;

// The lines `command` prints; the test fails when it cannot run or exits non-zero.
std::vector<std::string> output_lines(const std::string& command) {
  std::vector<std::string> lines;
  FILE* pipe = popen((command + " 2>/dev/null").c_str(), "r");
  if (!pipe) {
    ADD_FAILURE() << "cannot run: " << command;
    return lines;
  }
  char buffer[4096];
  std::string line;
  while (fgets(buffer, sizeof buffer, pipe)) {
    line += buffer;
    if (!line.empty() && line.back() == '\n') {
      line.pop_back();
      lines.push_back(line);
      line.clear();
    }
  }
  if (!line.empty()) lines.push_back(line);
  const int status = pclose(pipe);
  EXPECT_EQ(status, 0) << "failed: " << command;
  return lines;
}

// factorwatch's own symbols (mangled) an archive defines (`defined`) or leaves undefined.
std::set<std::string> project_symbols(const std::string& archive, bool defined) {
  std::set<std::string> out;
  const std::string options = defined ? "-g --defined-only" : "--undefined-only";
  for (const std::string& line : output_lines("nm " + options + " '" + archive + "'")) {
    const std::size_t space = line.find_last_of(' ');
    if (space == std::string::npos || space + 1 >= line.size()) continue;  // "file.o:" headers, blanks
    const std::string symbol = line.substr(space + 1);
    if (symbol.rfind("_ZN11factorwatch", 0) == 0 || symbol.rfind("_ZNK11factorwatch", 0) == 0) out.insert(symbol);
  }
  return out;
}

std::string demangled(const std::string& symbol) {
  int status = 0;
  std::unique_ptr<char, void (*)(void*)> text(abi::__cxa_demangle(symbol.c_str(), nullptr, nullptr, &status), std::free);
  return status == 0 && text ? text.get() : symbol;
}

TEST(LayerRules, StorageArchiveUsesNoEngineAlgorithm) {
  const std::set<std::string> algorithms = project_symbols(FACTORWATCH_ENGINE_ARCHIVE, true);
  const std::set<std::string> storage_needs = project_symbols(FACTORWATCH_STORAGE_ARCHIVE, false);
  // The check sees what it must: the algorithm archive defines engine::fit, and storage
  // needs some of factorwatch's own symbols (from the engine's value types).
  bool fit_seen = false;
  for (const std::string& s : algorithms) fit_seen |= demangled(s).rfind("factorwatch::engine::fit(", 0) == 0;
  ASSERT_TRUE(fit_seen) << "no engine::fit among " << algorithms.size() << " symbols of " << FACTORWATCH_ENGINE_ARCHIVE;
  ASSERT_FALSE(storage_needs.empty());
  std::ostringstream broken;
  for (const std::string& s : storage_needs)
    if (algorithms.count(s)) broken << "\n  " << demangled(s);
  EXPECT_TRUE(broken.str().empty()) << "storage calls engine algorithms (move the caller to pipeline/):" << broken.str();
}

// Every line of the C++ sources under `folder` that matches `pattern`, as "file:line: text".
std::vector<std::string> matching_lines(const fs::path& folder, const std::regex& pattern) {
  std::vector<std::string> hits;
  for (const auto& entry : fs::recursive_directory_iterator(folder)) {
    const std::string ext = entry.path().extension().string();
    if (!entry.is_regular_file() || (ext != ".cpp" && ext != ".h")) continue;
    std::ifstream in(entry.path());
    std::string line;
    for (int n = 1; std::getline(in, line); ++n)
      if (std::regex_search(line, pattern))
        hits.push_back(fs::relative(entry.path(), FACTORWATCH_SOURCE_DIR).string() + ":" + std::to_string(n) + ": " + line);
  }
  return hits;
}

std::string listed(const std::vector<std::string>& lines) {
  std::string out;
  for (const std::string& l : lines) out += "\n  " + l;
  return out;
}

const fs::path kSource = FACTORWATCH_SOURCE_DIR;

TEST(LayerRules, OnlyStorageSpeaksSql) {
  // SQLiteCpp, a raw statement or the database handle outside storage/.
  const std::regex sql(R"(SQLiteCpp|SQLite::|\.sql\(\))");
  for (const char* folder : {"engine", "pipeline", "server"}) {
    const auto hits = matching_lines(kSource / folder, sql);
    EXPECT_TRUE(hits.empty()) << folder << "/ holds SQL; add a plain read or write to storage/ instead:" << listed(hits);
  }
}

TEST(LayerRules, IncludesPointDownward) {
  const struct {
    const char* folder;
    const char* forbidden;  // includes of layers above it
  } rules[] = {
      {"engine", R"(#include\s+"factorwatch/(storage|pipeline)/|#include\s+<(nlohmann|httplib|SQLiteCpp))"},
      {"storage", R"(#include\s+"factorwatch/pipeline/|httplib)"},
      {"pipeline", R"(httplib|CLI/CLI)"},
      // The renderings both surfaces share know neither surface's library; the daemon's
      // handlers do not reach for the command line's.
      {"server/src/views", R"(httplib|CLI/CLI)"},
      {"server/src/http", R"(CLI/CLI)"},
  };
  for (const auto& rule : rules) {
    const auto hits = matching_lines(kSource / rule.folder, std::regex(rule.forbidden));
    EXPECT_TRUE(hits.empty()) << rule.folder << "/ includes a layer above it:" << listed(hits);
  }
}

}  // namespace
