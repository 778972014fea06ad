#pragma once
// Reader for the "<key> <count> <values...>" reference files written by validation/*/make_reference.py.

#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

namespace libseq::test {

inline std::map<std::string, std::vector<double>> read_reference_file(const std::filesystem::path& path) {
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open reference file " + path.string());
  std::map<std::string, std::vector<double>> records;
  std::string line;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    std::istringstream fields(line);
    std::string key;
    std::size_t count = 0;
    fields >> key >> count;
    std::vector<double> values(count);
    for (double& v : values) fields >> v;
    if (!fields) throw std::runtime_error("malformed record '" + key + "' in " + path.string());
    records[key] = std::move(values);
  }
  return records;
}

inline const std::vector<double>& record(const std::map<std::string, std::vector<double>>& records,
                                         const std::string& key) {
  auto it = records.find(key);
  if (it == records.end()) throw std::runtime_error("reference record '" + key + "' missing");
  return it->second;
}

}  // namespace libseq::test
