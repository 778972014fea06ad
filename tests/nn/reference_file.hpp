#pragma once
// Reader for the text reference files written by validation/torch_reference/make_reference.py:
//   "# comment", "meta key value key value ...", then pairs of lines "array <name> <ndim> <dims...>" / values.

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

namespace libseq::test {

struct ReferenceFile {
  std::map<std::string, std::string> meta;
  std::map<std::string, std::vector<double>> arrays;
  std::map<std::string, std::vector<std::size_t>> shapes;

  const std::vector<double>& at(const std::string& name) const {
    auto it = arrays.find(name);
    if (it == arrays.end()) throw std::runtime_error("reference array missing: " + name);
    return it->second;
  }
  std::size_t meta_size(const std::string& key) const { return std::stoul(meta.at(key)); }
};

inline ReferenceFile read_reference_file(const std::filesystem::path& path) {
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open reference file " + path.string());
  ReferenceFile file;
  std::string line;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    std::istringstream words(line);
    std::string kind;
    words >> kind;
    if (kind == "meta") {
      std::string key, value;
      while (words >> key >> value) file.meta[key] = value;
    } else if (kind == "array") {
      std::string name;
      std::size_t ndim = 0, count = 1;
      words >> name >> ndim;
      std::vector<std::size_t> shape(ndim);
      for (auto& s : shape) {
        words >> s;
        count *= s;
      }
      std::string values_line;
      std::getline(in, values_line);
      std::istringstream values(values_line);
      std::vector<double> data;
      data.reserve(count);
      std::string token;
      while (values >> token) data.push_back(token == "nan" ? std::nan("") : std::strtod(token.c_str(), nullptr));
      if (data.size() != count) throw std::runtime_error("reference array " + name + " has the wrong value count");
      file.arrays[name] = std::move(data);
      file.shapes[name] = std::move(shape);
    }
  }
  return file;
}

}  // namespace libseq::test
