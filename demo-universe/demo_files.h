// Writing the demo universe to CSV and README files. Part of the program only, so
// the factorwatch_demo library stays free of file I/O.
#pragma once

#include <cstdint>
#include <filesystem>
#include <string>
#include <vector>

#include "demo_portfolios.h"
#include "generator.h"

namespace factorwatch::demo {

struct WrittenFile {
  std::string name;
  std::uintmax_t bytes = 0;
};

// Writes returns_long.csv, returns_wide.csv, planted_loadings_before.csv,
// planted_loadings_after.csv, planted_specific_variance.csv, README.txt and the two demo
// portfolios (portfolio_benchmark.csv, portfolio_book.json) into
// `dir` (created if missing). Numbers as "%.10g"; a gap is an omitted row (long)
// or an empty cell (wide). Throws std::runtime_error naming the file on failure.
std::vector<WrittenFile> write_demo_files(const DemoUniverse& universe, const std::filesystem::path& dir);

}  // namespace factorwatch::demo
