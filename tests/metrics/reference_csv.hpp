#pragma once
// Reads the small comma-separated reference tables committed under validation/ (header line, then rows of plain
// fields without quotes or embedded commas).

#include <filesystem>
#include <fstream>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

namespace libseq::test {

struct CsvTable {
  std::vector<std::string> header;
  std::vector<std::vector<std::string>> rows;
};

inline std::vector<std::string> split_csv_line(const std::string& line) {
  std::vector<std::string> fields;
  std::stringstream stream(line);
  std::string field;
  while (std::getline(stream, field, ',')) fields.push_back(field);
  return fields;
}

inline CsvTable read_csv(const std::filesystem::path& path) {
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open reference table " + path.string());
  CsvTable table;
  std::string line;
  if (std::getline(in, line)) table.header = split_csv_line(line);
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    table.rows.push_back(split_csv_line(line));
    if (table.rows.back().size() != table.header.size()) {
      throw std::runtime_error("row " + std::to_string(table.rows.size()) + " of " + path.string() + " has " +
                               std::to_string(table.rows.back().size()) + " fields; expected " +
                               std::to_string(table.header.size()));
    }
  }
  return table;
}

}  // namespace libseq::test
