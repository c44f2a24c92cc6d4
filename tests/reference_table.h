// Reads the reference CSV files in tests/reference/: '#' lines are provenance
// comments, the first other line is the header, fields are plain (no quotes).
#pragma once

#include <fstream>
#include <map>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

namespace factorwatch::testing {

struct ReferenceTable {
  std::vector<std::string> header;
  std::vector<std::vector<std::string>> rows;

  std::size_t column(const std::string& name) const {
    for (std::size_t i = 0; i < header.size(); ++i)
      if (header[i] == name) return i;
    throw std::runtime_error("reference table has no column " + name);
  }
  double number(std::size_t row, const std::string& name) const {
    return std::stod(rows.at(row).at(column(name)));
  }
  std::string text(std::size_t row, const std::string& name) const {
    return rows.at(row).at(column(name));
  }
};

inline std::vector<std::string> split_csv_line(const std::string& line) {
  std::vector<std::string> out;
  std::stringstream ss(line);
  std::string field;
  while (std::getline(ss, field, ',')) {
    if (!field.empty() && field.back() == '\r') field.pop_back();
    out.push_back(field);
  }
  return out;
}

inline ReferenceTable read_reference(const std::string& file) {
  const std::string path = std::string(FACTORWATCH_REFERENCE_DIR) + "/" + file;
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open " + path);
  ReferenceTable t;
  std::string line;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    if (t.header.empty())
      t.header = split_csv_line(line);
    else
      t.rows.push_back(split_csv_line(line));
  }
  return t;
}

}  // namespace factorwatch::testing
