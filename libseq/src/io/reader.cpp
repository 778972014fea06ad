#include "libseq/io/reader.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstring>
#include <fstream>

#include "hdf5_reader_impl.hpp"
#include "libseq/data/units.hpp"
#include "libseq/error.hpp"
#include "libseq/io/csv_reader.hpp"
#include "libseq/io/hdf5_reader.hpp"
#include "libseq/io/netcdf_reader.hpp"
#include "reader_impl.hpp"

namespace libseq::io {

namespace detail {

std::string join(const std::vector<std::string>& names, std::size_t limit) {
  std::string out;
  for (std::size_t i = 0; i < names.size() && i < limit; ++i) {
    if (i) out += ", ";
    out += names[i];
  }
  if (names.size() > limit) out += ", ... (" + std::to_string(names.size()) + " in all)";
  return out.empty() ? "none" : out;
}

std::vector<std::size_t> select_variables(const std::vector<data::VariableInfo>& available,
                                          const std::vector<std::string>& requested, std::string_view source) {
  std::vector<std::size_t> chosen;
  if (requested.empty()) {
    for (std::size_t v = 0; v < available.size(); ++v) chosen.push_back(v);
    return chosen;
  }
  for (const std::string& key : requested) {
    auto by_name = std::find_if(available.begin(), available.end(), [&](const auto& v) { return v.name == key; });
    if (by_name == available.end()) {
      by_name = std::find_if(available.begin(), available.end(),
                             [&](const auto& v) { return !v.standard_name.empty() && v.standard_name == key; });
    }
    if (by_name == available.end()) {
      std::vector<std::string> present;
      for (const auto& v : available) {
        present.push_back(v.standard_name.empty() ? v.name : v.name + " (" + v.standard_name + ")");
      }
      throw DataError(std::string(source) + ": variable '" + key +
                      "' not found (by name or standard_name); variables present: " + join(present, 1000));
    }
    const auto index = static_cast<std::size_t>(by_name - available.begin());
    // Asking for one variable twice (by name and by standard_name) reads it once.
    if (std::find(chosen.begin(), chosen.end(), index) == chosen.end()) chosen.push_back(index);
  }
  return chosen;
}

std::vector<std::size_t> select_sites(const std::vector<std::string>& ids, const std::vector<std::string>& requested,
                                      std::string_view source) {
  std::vector<std::size_t> chosen;
  if (requested.empty()) {
    for (std::size_t s = 0; s < ids.size(); ++s) chosen.push_back(s);
    return chosen;
  }
  for (const std::string& id : requested) {
    const auto found = std::find(ids.begin(), ids.end(), id);
    if (found == ids.end()) {
      throw DataError(std::string(source) + ": site '" + id + "' not found; sites present: " + join(ids));
    }
    chosen.push_back(static_cast<std::size_t>(found - ids.begin()));
  }
  // File order, so that a subset reads the file front to back and panels of one file agree on site order.
  std::sort(chosen.begin(), chosen.end());
  chosen.erase(std::unique(chosen.begin(), chosen.end()), chosen.end());
  return chosen;
}

data::TimeAxis regular_axis(std::span<const data::UtcSeconds> times, std::string_view source,
                            const std::function<std::string(std::size_t)>& where, std::int64_t default_step_seconds) {
  if (times.empty()) throw DataError(std::string(source) + ": no time steps");
  if (times.size() == 1) return data::TimeAxis(times[0], default_step_seconds, 1);
  const std::int64_t step = times[1] - times[0];
  for (std::size_t i = 1; i < times.size(); ++i) {
    const std::int64_t delta = times[i] - times[i - 1];
    if (delta == step && step > 0) continue;
    const std::string at = std::string(source) + ", " + where(i) + ": time " + data::format_iso8601(times[i]);
    if (delta == 0) throw DataError(at + " repeats the previous time (duplicate time)");
    if (delta < 0) {
      throw DataError(at + " is earlier than the previous time " + data::format_iso8601(times[i - 1]) +
                      " (times must increase)");
    }
    throw DataError(at + " is " + std::to_string(delta) + " s after the previous time " +
                    data::format_iso8601(times[i - 1]) + ", but the step so far is " + std::to_string(step) +
                    " s (irregular step; a regular step is required, write missing values as empty cells or NaN)");
  }
  return data::TimeAxis(times[0], step, times.size());
}

void finish_panel(ReadResult& result, const ReadOptions& options, std::string_view source) {
  data::Panel& panel = result.panel;
  const std::size_t time_count = panel.time_count();
  const std::size_t variable_count = panel.variable_count();
  for (std::size_t s = 0; s < panel.site_count(); ++s) {
    const auto values = panel.site_values(s);
    for (std::size_t i = 0; i < values.size(); ++i) {
      if (!std::isinf(values[i])) continue;
      const std::size_t t = i / variable_count;
      throw DataError(std::string(source) + ": variable '" + panel.variables()[i % variable_count].name + "', site '" +
                      panel.sites()[s].id + "', time " + data::format_iso8601(panel.axis().time_at(t)) + ": value is " +
                      (values[i] > 0 ? "+Inf" : "-Inf") +
                      "; infinite values are refused (write missing values as NaN)");
    }
  }
  std::vector<bool> drop(panel.site_count(), false);
  std::size_t dropped = 0;
  for (std::size_t s = 0; s < panel.site_count(); ++s) {
    const auto values = panel.site_values(s);
    drop[s] = std::all_of(values.begin(), values.end(), [](float x) { return std::isnan(x); });
    if (drop[s]) {
      ++dropped;
      result.warnings.push_back(std::string(source) + ": site '" + panel.sites()[s].id +
                                "' skipped: every value of every variable read is missing");
    }
  }
  if (dropped) panel.remove_sites(drop);
  if (panel.site_count() == 0) {
    throw DataError(std::string(source) + ": no site has any value of the variables read (all missing)");
  }
  for (const auto& [key, target] : options.target_units) {
    const auto v = panel.find_variable(key);
    if (!v || panel.variables()[*v].units == target) continue;
    data::VariableInfo& info = panel.variables()[*v];
    const std::string what = std::string(source) + ": variable '" + info.name + "'";
    std::vector<float> series(time_count);
    for (std::size_t s = 0; s < panel.site_count(); ++s) {
      for (std::size_t t = 0; t < time_count; ++t) series[t] = panel.at(s, t, *v);
      data::convert_units(series, info.units, target, what);
      for (std::size_t t = 0; t < time_count; ++t) panel.at(s, t, *v) = series[t];
    }
    info.units = target;
  }
}

}  // namespace detail

std::string to_string(FileFormat format) {
  switch (format) {
    case FileFormat::netcdf:
      return "netcdf";
    case FileFormat::hdf5:
      return "hdf5";
    case FileFormat::csv:
      return "csv";
  }
  return "unknown";
}

FileFormat parse_file_format(std::string_view text) {
  if (text == "netcdf") return FileFormat::netcdf;
  if (text == "hdf5") return FileFormat::hdf5;
  if (text == "csv") return FileFormat::csv;
  throw ConfigError("file format '" + std::string(text) + "' is not known; expected one of netcdf, hdf5, csv");
}

namespace {

constexpr std::array<unsigned char, 8> hdf5_signature{0x89, 'H', 'D', 'F', '\r', '\n', 0x1a, '\n'};

bool has_hdf5_signature(std::ifstream& in, std::uintmax_t size) {
  // The superblock sits at offset 0 or after a user block of 512, 1024, 2048, ... bytes (HDF5 File Format
  // Specification version 3.0, section II.A "Disk Format: Level 0A - Format Signature and Superblock").
  for (std::uintmax_t offset = 0; offset + hdf5_signature.size() <= size; offset = offset ? offset * 2 : 512) {
    std::array<unsigned char, 8> bytes{};
    in.clear();
    in.seekg(static_cast<std::streamoff>(offset));
    in.read(reinterpret_cast<char*>(bytes.data()), bytes.size());
    if (in.gcount() == static_cast<std::streamsize>(bytes.size()) && bytes == hdf5_signature) return true;
  }
  return false;
}

// First line that is neither blank nor a '#' comment, looked for in the first 64 KiB.
bool looks_like_csv_with_time(const std::string& head) {
  if (head.find('\0') != std::string::npos) return false;
  std::size_t pos = 0;
  while (pos < head.size()) {
    std::size_t end = head.find('\n', pos);
    if (end == std::string::npos) end = head.size();
    std::string_view line(head.data() + pos, end - pos);
    pos = end + 1;
    if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
    if (line.size() >= 3 && static_cast<unsigned char>(line[0]) == 0xEF &&
        static_cast<unsigned char>(line[1]) == 0xBB && static_cast<unsigned char>(line[2]) == 0xBF) {
      line.remove_prefix(3);  // UTF-8 byte order mark
    }
    const auto first = line.find_first_not_of(" \t");
    if (first == std::string_view::npos || line[first] == '#') continue;
    for (unsigned char c : line) {
      if (c < 0x20 && c != '\t') return false;
    }
    std::size_t start = 0;
    while (start <= line.size()) {
      std::size_t comma = line.find(',', start);
      if (comma == std::string_view::npos) comma = line.size();
      std::string_view field = line.substr(start, comma - start);
      while (!field.empty() && (field.front() == ' ' || field.front() == '\t' || field.front() == '"')) {
        field.remove_prefix(1);
      }
      while (!field.empty() && (field.back() == ' ' || field.back() == '\t' || field.back() == '"')) {
        field.remove_suffix(1);
      }
      if (field == "time") return true;
      start = comma + 1;
    }
    return false;
  }
  return false;
}

}  // namespace

FileFormat detect_format(const std::filesystem::path& path) {
  std::error_code ec;
  const auto status = std::filesystem::status(path, ec);
  if (!std::filesystem::exists(status)) throw IoError(path.string() + ": file not found");
  if (std::filesystem::is_directory(status)) throw IoError(path.string() + ": is a directory, expected a file");
  std::ifstream in(path, std::ios::binary);
  if (!in) throw IoError(path.string() + ": cannot open for reading");
  const std::uintmax_t size = std::filesystem::file_size(path, ec);
  if (ec || size == 0) {
    throw FormatError(path.string() + ": empty file; not a CF NetCDF, runnel HDF5 or CSV file");
  }
  if (has_hdf5_signature(in, size)) {
    return detail::hdf5_has_runnel_layout(path) ? FileFormat::hdf5 : FileFormat::netcdf;
  }
  in.clear();
  in.seekg(0);
  std::string head(static_cast<std::size_t>(std::min<std::uintmax_t>(size, 65536)), '\0');
  in.read(head.data(), static_cast<std::streamsize>(head.size()));
  head.resize(static_cast<std::size_t>(in.gcount()));
  // NetCDF classic (CDF\1), 64-bit offset (CDF\2) and 64-bit data (CDF\5): "The NetCDF Classic Format
  // Specification", NetCDF Users Guide, the `magic` production.
  if (head.size() >= 4 && head.compare(0, 3, "CDF") == 0 && (head[3] == 1 || head[3] == 2 || head[3] == 5)) {
    return FileFormat::netcdf;
  }
  if (looks_like_csv_with_time(head)) return FileFormat::csv;
  throw FormatError(path.string() +
                    ": not a CF NetCDF, runnel HDF5 or CSV file (no HDF5 or NetCDF signature, and no CSV header "
                    "with a 'time' column on the first line that is not a '#' comment)");
}

ReadResult read_panel(const std::filesystem::path& path, const ReadOptions& options) {
  switch (detect_format(path)) {
    case FileFormat::netcdf:
      return read_netcdf(path, options);
    case FileFormat::hdf5:
      return read_hdf5(path, options);
    case FileFormat::csv:
      return read_csv(path, options);
  }
  throw FormatError(path.string() + ": unknown format");
}

}  // namespace libseq::io
