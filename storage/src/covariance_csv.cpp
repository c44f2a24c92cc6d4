// A square covariance or correlation matrix with names along both edges.
#include "factorwatch/storage/covariance_csv.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <stdexcept>
#include <unordered_map>

#include "cell_parse.h"
#include "csv_scanner.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/returns_csv.h"  // kLargestInputBytes
#include "file_text.h"

namespace factorwatch::storage {
namespace {

// The shortest decimal that reads back as the same double: what the user typed, usually.
std::string number_text(double v) {
  char buffer[32];
  for (int digits = 15; digits <= 17; ++digits) {
    std::snprintf(buffer, sizeof buffer, "%.*g", digits, v);
    if (std::strtod(buffer, nullptr) == v) break;
  }
  return buffer;
}

struct Edges {
  std::vector<std::string> names;  // the assets, in header order
  std::string row_label;           // how to call the first column in messages
  bool row_names = true;           // each row starts with its asset's name
};

// The header may or may not start with a corner cell, and the rows may or may not
// start with names; the first data row decides. As wide as the header and starting
// with a number (not a name): a bare matrix under a header of names, read by position.
Edges read_edges(const std::vector<std::string>& header, std::size_t header_line,
                 std::size_t first_row_width, std::string_view first_field, std::size_t first_row_line,
                 const std::string& path) {
  Edges edges;
  double probe = 0;
  if (first_row_width == header.size() && !header[0].empty() &&
      detail::parse_cell(first_field, probe) == detail::Cell::number) {
    edges.names = header;
    edges.row_label = edges.names[0];
    edges.row_names = false;
  } else if (first_row_width == header.size()) {
    edges.names.assign(header.begin() + 1, header.end());
    edges.row_label = header[0].empty() ? "(row names)" : header[0];
  } else if (first_row_width == header.size() + 1) {
    edges.names = header;
    edges.row_label = "(row names)";
  } else {
    throw InputError(path, first_row_line, "",
                     "the row has " + std::to_string(first_row_width) + " fields but the header has " +
                         std::to_string(header.size()) +
                         " (expected a name followed by one number per header name)");
  }
  if (edges.names.empty()) throw InputError(path, header_line, "", "the header names no assets");
  std::unordered_map<std::string_view, std::size_t> seen;
  for (std::size_t j = 0; j < edges.names.size(); ++j) {
    if (edges.names[j].empty())
      throw InputError(path, header_line, "column " + std::to_string(j + 1), "asset name is empty");
    auto [at, fresh] = seen.emplace(edges.names[j], j);
    if (!fresh)
      throw InputError(path, header_line, edges.names[j], "asset name appears twice in the header");
  }
  return edges;
}

void check_symmetry(const Eigen::MatrixXd& m, const Edges& edges,
                    const std::vector<std::size_t>& lines, const std::string& path) {
  const Eigen::Index n = m.rows();
  for (Eigen::Index i = 0; i < n; ++i) {
    for (Eigen::Index j = i + 1; j < n; ++j) {
      const double a = m(i, j), b = m(j, i);
      const double scale = std::max({std::abs(a), std::abs(b), std::sqrt(m(i, i) * m(j, j))});
      if (std::abs(a - b) <= kSymmetryTolerance * scale) continue;
      const std::string& row = edges.names[static_cast<std::size_t>(i)];
      const std::string& col = edges.names[static_cast<std::size_t>(j)];
      throw InputError(path, lines[static_cast<std::size_t>(i)], col,
                       "not symmetric: (" + row + ", " + col + ") = " + number_text(a) + " but (" +
                           col + ", " + row + ") = " + number_text(b) + " on line " +
                           std::to_string(lines[static_cast<std::size_t>(j)]) +
                           " (allowed relative difference 1e-10)");
    }
  }
}

}  // namespace

engine::CovarianceInput read_covariance_csv(const std::string& path, double observations) {
  if (!(observations > 0) || !std::isfinite(observations))
    throw std::invalid_argument("read_covariance_csv: observations must be a positive finite number, got " +
                                number_text(observations));
  detail::FileText file(path, kLargestInputBytes);
  detail::CsvScanner scanner(file.text(), path);
  scanner.skip_comments();
  std::vector<std::string_view> fields;
  if (!scanner.next(fields)) throw InputError(path, 0, "", "the file has no header row");
  const std::size_t header_line = scanner.line();
  const std::vector<std::string> header(fields.begin(), fields.end());
  if (!scanner.next(fields)) throw InputError(path, header_line, "", "no matrix rows after the header");

  const Edges edges = read_edges(header, header_line, fields.size(), fields.empty() ? std::string_view() : fields[0],
                                 scanner.line(), path);
  const std::size_t n = edges.names.size();
  const std::size_t first = edges.row_names ? 1 : 0;  // where the numbers start in a row
  scanner.set_column_names(nullptr);  // row fields are offset by one from the names

  engine::CovarianceInput input;
  input.assets = edges.names;
  input.observations = observations;
  input.matrix.resize(static_cast<Eigen::Index>(n), static_cast<Eigen::Index>(n));
  std::vector<std::size_t> lines;
  lines.reserve(n);
  do {
    const std::size_t line = scanner.line();
    const std::size_t i = lines.size();
    if (i == n)
      throw InputError(path, line, edges.row_label,
                       "extra row " + detail::quoted(fields[0]) + ": the header names " +
                           std::to_string(n) + " assets");
    if (fields.size() != n + first) {
      const std::string counts = "the row has " + std::to_string(fields.size()) + " fields, expected " +
                                 std::to_string(n + first) +
                                 (edges.row_names ? " (a name and " + std::to_string(n) + " numbers)" : "");
      if (fields.size() < n + first)
        throw InputError(path, line, edges.names[fields.size() > first ? fields.size() - first : 0],
                         "missing: " + counts);
      throw InputError(path, line, edges.names.back(), "extra fields after this column: " + counts);
    }
    if (edges.row_names && fields[0] != edges.names[i])
      throw InputError(path, line, edges.row_label,
                       "row name " + detail::quoted(fields[0]) + " does not match the header's " +
                           detail::quoted(edges.names[i]) + " in the same position");
    for (std::size_t j = 0; j < n; ++j) {
      double value = 0;
      const detail::Cell kind = detail::parse_cell(fields[j + first], value);
      if (kind == detail::Cell::gap)
        throw InputError(path, line, edges.names[j], "missing value (a matrix may have no gaps)");
      if (kind != detail::Cell::number)
        throw InputError(path, line, edges.names[j], detail::describe_bad_cell(kind, fields[j + first]));
      if (i == j && value < 0)
        throw InputError(path, line, edges.names[j],
                         "negative variance " + number_text(value) + " on the diagonal");
      input.matrix(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) = value;
    }
    lines.push_back(line);
  } while (scanner.next(fields));
  if (lines.size() < n)
    throw InputError(path, lines.back(), "",
                     "the matrix ends after " + std::to_string(lines.size()) + " rows; the row for " +
                         detail::quoted(edges.names[lines.size()]) + " is missing");

  check_symmetry(input.matrix, edges, lines, path);
  // Exactly symmetric from here on: the engine's symmetric solvers read one triangle.
  input.matrix = (0.5 * (input.matrix + input.matrix.transpose())).eval();
  return input;
}

}  // namespace factorwatch::storage
