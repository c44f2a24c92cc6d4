// The returns reader (storage/returns_csv.h) on any text, in each of its three modes.
// The first byte picks the mode ('s' prices to simple returns, 'l' prices to log returns,
// anything else returns); the rest is the file.
#include <cmath>
#include <set>

#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/returns_csv.h"
#include "fuzz_checks.h"

using namespace factorwatch;

namespace {

storage::ValuesInFile mode_of(char c) {
  if (c == 's') return storage::ValuesInFile::prices_to_simple_returns;
  if (c == 'l') return storage::ValuesInFile::prices_to_log_returns;
  return storage::ValuesInFile::returns;
}

// The promises of returns_csv.h for a file that was read.
void check_file(const storage::ReturnsFile& file, storage::ValuesInFile mode) {
  const auto& panel = file.panel;
  fuzz::require(file.layout == "long" || file.layout == "wide", "layout is neither long nor wide");
  fuzz::require(file.data_rows >= 1, "a file read without data rows");
  fuzz::require(panel.values.rows() == static_cast<Eigen::Index>(panel.dates.size()), "rows != dates");
  fuzz::require(panel.values.cols() == static_cast<Eigen::Index>(panel.assets.size()), "columns != assets");
  for (std::size_t t = 1; t < panel.dates.size(); ++t)
    fuzz::require(panel.dates[t - 1] < panel.dates[t], "dates do not strictly ascend");
  fuzz::require(std::set<std::string>(panel.assets.begin(), panel.assets.end()).size() == panel.assets.size(),
                "an asset appears twice");
  for (const auto& asset : panel.assets) fuzz::require(!asset.empty(), "an empty asset name");
  std::size_t present = 0;
  // A log return of a price ratio up to 11 (kLargestReturn + 1) is at most log(11).
  const double largest = mode == storage::ValuesInFile::prices_to_log_returns ? std::log(1 + storage::kLargestReturn)
                                                                             : storage::kLargestReturn;
  for (Eigen::Index i = 0; i < panel.values.size(); ++i) {
    const double v = panel.values.data()[i];
    if (std::isnan(v)) continue;
    ++present;
    fuzz::require(std::isfinite(v), "an infinite return");
    fuzz::require(v <= largest, "a return above the largest allowed");
    if (mode != storage::ValuesInFile::prices_to_log_returns) fuzz::require(v > -1, "a return at or below -100 %");
  }
  fuzz::require(present == file.values_present, "values_present miscounted");
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size == 0) return 0;
  const auto mode = mode_of(static_cast<char>(data[0]));
  const std::string_view text = fuzz::as_text(data + 1, size - 1);
  try {
    check_file(storage::read_returns_text(text, "fuzz.csv", {mode}), mode);
  } catch (const storage::InputError& e) {
    fuzz::require(e.path() == "fuzz.csv", "the error names another file");
    fuzz::require_clean_input_error(e, text);
  }
  return 0;
}
