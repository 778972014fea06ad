#pragma once
// Readers for the committed reference files of the baselines checks: validation/exp_smoothing/reference.txt
// (`key v1 v2 ...` per line) and the CSV extracts in validation/datasets/.

#include <cmath>
#include <fstream>
#include <map>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "support/paths.hpp"

namespace libseq::test {

inline std::map<std::string, std::vector<double>> read_reference(const std::string& relative) {
  const auto path = source_dir() / relative;
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open reference file " + path.string());
  std::map<std::string, std::vector<double>> out;
  std::string line;
  while (std::getline(in, line)) {
    std::istringstream fields(line);
    std::string key, token;
    if (!(fields >> key)) continue;
    auto& values = out[key];
    while (fields >> token) values.push_back(std::stod(token));
  }
  return out;
}

/// One numeric column of a CSV file with a header line; empty cells and "NA" read as NaN.
inline std::vector<double> read_csv_column(const std::string& relative, const std::string& column) {
  const auto path = source_dir() / relative;
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open dataset " + path.string());
  std::string line;
  std::getline(in, line);
  std::size_t index = 0;
  bool found = false;
  {
    std::istringstream header(line);
    std::string name;
    for (std::size_t i = 0; std::getline(header, name, ','); ++i) {
      if (name == column) {
        index = i;
        found = true;
      }
    }
  }
  if (!found) throw std::runtime_error("column " + column + " not in " + path.string());
  std::vector<double> values;
  while (std::getline(in, line)) {
    std::istringstream row(line);
    std::string cell;
    for (std::size_t i = 0; i <= index; ++i) std::getline(row, cell, ',');
    values.push_back(cell.empty() || cell == "NA" ? std::nan("") : std::stod(cell));
  }
  return values;
}

}  // namespace libseq::test
