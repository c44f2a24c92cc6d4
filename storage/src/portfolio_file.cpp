// Reading a holdings file (CSV or JSON, told apart by the first character) and applying
// the options: the name, and the as-of date and benchmark, which win over the file's.
#include <cmath>
#include <cstdio>
#include <stdexcept>

#include "cell_parse.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/portfolios.h"
#include "factorwatch/storage/returns_csv.h"  // kLargestInputBytes
#include "factorwatch/storage/timestamps.h"
#include "file_text.h"
#include "holdings_file.h"
#include "sha256.h"

namespace factorwatch::storage {
namespace {

bool starts_as_json(std::string_view text) {
  const std::size_t first = text.find_first_not_of(" \t\r\n");
  return first != std::string_view::npos && text[first] == '{';
}

std::string checked_name(const std::string& name, const char* what) {
  if (!is_portfolio_name(name))
    throw std::invalid_argument(std::string(what) + " '" + name +
                                "': use 1 to 64 letters, digits, '.', '_' or '-'");
  return name;
}

}  // namespace

std::string weight_problem(double weight) {
  if (!std::isfinite(weight)) return "is not a finite number";
  if (std::abs(weight) <= kLargestWeight) return "";
  return "is beyond +-1e15, the largest weight accepted: weights are fractions of the book or amounts of "
         "money, and no real holding is that large (a unit slip?)";
}

bool is_portfolio_name(const std::string& name) {
  std::string ignored;
  return valid_model_name(name, &ignored);
}

Portfolio read_portfolio_file(const std::string& path, const PortfolioFileOptions& options) {
  const detail::FileText file(path, kLargestInputBytes);
  return parse_portfolio_text(std::string(file.text()), path, options);
}

Portfolio parse_portfolio_text(const std::string& text, const std::string& label, const PortfolioFileOptions& options) {
  // The options first: a bad option is the caller's mistake, whatever the file holds.
  Portfolio p;
  p.name = checked_name(options.name, "portfolio name");
  if (!options.benchmark.empty()) checked_name(options.benchmark, "benchmark name");
  if (options.benchmark == p.name)
    throw std::invalid_argument("benchmark name '" + options.benchmark + "': a portfolio cannot be its own benchmark");

  std::string_view body(text);
  constexpr std::string_view kBom = "\xEF\xBB\xBF";
  if (body.substr(0, kBom.size()) == kBom) body.remove_prefix(kBom.size());
  detail::HoldingsFile file =
      starts_as_json(body) ? detail::read_holdings_json(body, label) : detail::read_holdings_csv(body, label);

  if (!file.benchmark.empty() && !is_portfolio_name(file.benchmark))
    throw InputError(label, file.benchmark_line, "benchmark",
                     detail::quoted(file.benchmark) + " cannot name a portfolio: use 1 to 64 letters, digits, "
                                                      "'.', '_' or '-'");
  p.as_of = options.as_of ? *options.as_of : file.as_of ? *file.as_of : utc_today();
  p.benchmark = !options.benchmark.empty() ? options.benchmark : file.benchmark;
  if (p.benchmark == p.name)  // only the file's can be, the option's was checked above
    throw InputError(label, file.benchmark_line, "benchmark",
                     "the portfolio '" + p.name + "' cannot be its own benchmark");
  p.holdings = std::move(file.holdings);
  p.source = label;
  p.content_sha256 = detail::holdings_sha256(p.holdings, p.benchmark);
  return p;
}

namespace detail {

std::string holdings_sha256(const engine::Holdings& holdings, const std::string& benchmark) {
  std::string text = "factorwatch holdings 1\nbenchmark " + std::to_string(benchmark.size()) + ":" + benchmark + "\n";
  char weight[40];
  for (const engine::Holding& h : holdings) {
    std::snprintf(weight, sizeof weight, "%.17g", stored_weight(h.weight));
    text += std::to_string(h.asset.size()) + ":" + h.asset + " " + weight + "\n";
  }
  return sha256_hex(text);
}

}  // namespace detail
}  // namespace factorwatch::storage
