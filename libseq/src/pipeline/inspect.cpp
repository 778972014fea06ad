#include "libseq/pipeline/inspect.hpp"

#include "libseq/io/json_text.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "libseq/caution.hpp"
#include "libseq/error.hpp"
#include "libseq/io/reader.hpp"

namespace libseq::pipeline {

namespace {

std::string kind_of(const std::exception& e) {
  if (dynamic_cast<const IoError*>(&e)) return "io";
  if (dynamic_cast<const FormatError*>(&e)) return "format";
  if (dynamic_cast<const DataError*>(&e)) return "data";
  if (dynamic_cast<const ConfigError*>(&e)) return "config";
  return "other";
}

void record_error(FileInspection& file, const std::exception& e) {
  file.error = e.what();
  // The message must let the user find the file even when a lower layer did not name it.
  if (file.error.find(file.path) == std::string::npos) file.error = file.path + ": " + file.error;
  file.error_kind = kind_of(e);
}

FileInspection inspect_one(const std::filesystem::path& path, const io::ReadOptions& options) {
  FileInspection file;
  file.path = path.string();
  try {
    file.format = io::detect_format(path);
    const io::ReadResult result = io::read_panel(path, options);
    const data::Panel& panel = result.panel;
    for (const auto& v : panel.variables()) file.variables.push_back({v.name, v.units, v.standard_name});
    for (std::size_t s = 0; s < panel.site_count(); ++s) {
      const data::SiteInfo& info = panel.sites()[s];
      InspectedSite site{info.id, info.name, info.latitude, info.longitude, {}};
      for (std::size_t v = 0; v < panel.variable_count(); ++v)
        site.missing_fraction.push_back(panel.missing_fraction(s, v));
      file.sites.push_back(std::move(site));
    }
    const data::TimeAxis& axis = panel.axis();
    file.time_count = axis.length();
    file.step_seconds = axis.step_seconds();
    file.step = axis.describe_step();
    if (axis.length()) {
      file.time_start = data::format_iso8601(axis.start());
      file.time_end = data::format_iso8601(axis.end());
    }
    file.warnings = result.warnings;
  } catch (const std::exception& e) {
    record_error(file, e);
  }
  return file;
}

// Display width of UTF-8 text: one column per code point (continuation bytes 10xxxxxx do not count).
std::size_t display_width(const std::string& text) {
  return static_cast<std::size_t>(
      std::count_if(text.begin(), text.end(), [](char c) { return (static_cast<unsigned char>(c) & 0xC0) != 0x80; }));
}

std::string format_number(double value, const char* format) {
  if (std::isnan(value)) return "-";
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, format, value);
  return buffer;
}

// Rows of cells printed as columns separated by two spaces; columns flagged `right` are right-aligned (numbers).
void append_table(std::string& out, const std::vector<std::vector<std::string>>& rows, const std::vector<bool>& right,
                  const std::string& indent) {
  std::vector<std::size_t> widths;
  for (const auto& row : rows) {
    widths.resize(std::max(widths.size(), row.size()), 0);
    for (std::size_t c = 0; c < row.size(); ++c) widths[c] = std::max(widths[c], display_width(row[c]));
  }
  for (const auto& row : rows) {
    std::string line = indent;
    for (std::size_t c = 0; c < row.size(); ++c) {
      const std::string pad(widths[c] - display_width(row[c]), ' ');
      const bool align_right = c < right.size() && right[c];
      line += align_right ? pad + row[c] : row[c] + (c + 1 < row.size() ? pad : "");
      if (c + 1 < row.size()) line += "  ";
    }
    out += line + "\n";
  }
}

// A table cell: "-" for empty text, control characters (tabs, line breaks from a file) shown as spaces.
std::string or_dash(const std::string& text) {
  if (text.empty()) return "-";
  std::string cell = text;
  for (char& c : cell) {
    if (static_cast<unsigned char>(c) < 0x20) c = ' ';
  }
  return cell;
}

}  // namespace

std::size_t InspectReport::failed_count() const {
  return static_cast<std::size_t>(std::count_if(files.begin(), files.end(), [](const auto& f) { return !f.ok(); }));
}

std::string InspectReport::to_text() const {
  std::string out;
  for (const FileInspection& file : files) {
    out += "file: " + file.path + "\n";
    if (file.format) out += "  format: " + io::to_string(*file.format) + "\n";
    if (!file.ok()) {
      out += "  error (" + file.error_kind + "): " + file.error + "\n\n";
      continue;
    }
    out += "  time:   " + file.time_start + " .. " + file.time_end + ", step " + file.step + ", " +
           std::to_string(file.time_count) + " steps\n";
    out += "  variables (" + std::to_string(file.variables.size()) + "):\n";
    std::vector<std::vector<std::string>> rows{{"name", "units", "standard_name"}};
    for (const auto& v : file.variables) rows.push_back({or_dash(v.name), or_dash(v.units), or_dash(v.standard_name)});
    append_table(out, rows, {}, "    ");
    out += "  sites (" + std::to_string(file.sites.size()) + "), missing values per variable:\n";
    rows = {{"id", "name", "latitude", "longitude"}};
    std::vector<bool> right{false, false, true, true};
    for (const auto& v : file.variables) {
      rows[0].push_back(v.name);
      right.push_back(true);
    }
    for (const auto& s : file.sites) {
      std::vector<std::string> row{or_dash(s.id), or_dash(s.name), format_number(s.latitude, "%.4f"),
                                   format_number(s.longitude, "%.4f")};
      for (double fraction : s.missing_fraction) row.push_back(format_number(100.0 * fraction, "%.1f%%"));
      rows.push_back(std::move(row));
    }
    append_table(out, rows, right, "    ");
    if (!file.warnings.empty()) {
      out += "  warnings (" + std::to_string(file.warnings.size()) + "):\n";
      for (const auto& w : file.warnings) out += "    " + w + "\n";
    }
    out += "\n";
  }
  out += std::to_string(files.size()) + (files.size() == 1 ? " file" : " files") + " inspected, " +
         std::to_string(failed_count()) + " could not be read\n" + caution_text() + "\n";
  return out;
}

std::string InspectReport::to_json() const {
  std::string out = "{\"files\": [";
  for (std::size_t f = 0; f < files.size(); ++f) {
    const FileInspection& file = files[f];
    out += f ? ",\n  {" : "\n  {";
    out += "\"path\": " + io::json_string(file.path);
    out += ", \"ok\": " + std::string(file.ok() ? "true" : "false");
    out += ", \"format\": " + (file.format ? io::json_string(io::to_string(*file.format)) : std::string("null"));
    if (!file.ok()) {
      out +=
          ", \"error_kind\": " + io::json_string(file.error_kind) + ", \"error\": " + io::json_string(file.error) + "}";
      continue;
    }
    out += ",\n   \"time\": {\"start\": " + io::json_string(file.time_start) +
           ", \"end\": " + io::json_string(file.time_end) + ", \"step_seconds\": " + std::to_string(file.step_seconds) +
           ", \"step\": " + io::json_string(file.step) + ", \"count\": " + std::to_string(file.time_count) + "}";
    out += ",\n   \"variables\": [";
    for (std::size_t v = 0; v < file.variables.size(); ++v) {
      const auto& var = file.variables[v];
      out += (v ? ", " : "") + std::string("{\"name\": ") + io::json_string(var.name) +
             ", \"units\": " + io::json_string(var.units) +
             ", \"standard_name\": " + io::json_string(var.standard_name) + "}";
    }
    out += "],\n   \"sites\": [";
    for (std::size_t s = 0; s < file.sites.size(); ++s) {
      const auto& site = file.sites[s];
      out += (s ? ",\n     " : "\n     ") + std::string("{\"id\": ") + io::json_string(site.id) +
             ", \"name\": " + io::json_string(site.name) + ", \"latitude\": " + io::json_number(site.latitude) +
             ", \"longitude\": " + io::json_number(site.longitude) + ", \"missing_fraction\": {";
      for (std::size_t v = 0; v < site.missing_fraction.size() && v < file.variables.size(); ++v) {
        out += (v ? ", " : "") + io::json_string(file.variables[v].name) + ": " +
               io::json_number(site.missing_fraction[v]);
      }
      out += "}}";
    }
    out += "],\n   \"warnings\": [";
    for (std::size_t w = 0; w < file.warnings.size(); ++w) out += (w ? ", " : "") + io::json_string(file.warnings[w]);
    out += "]}";
  }
  out += "\n ],\n \"file_count\": " + std::to_string(files.size()) +
         ", \"failed_count\": " + std::to_string(failed_count()) +
         ",\n \"caution\": " + io::json_string(caution_text()) + "}\n";
  return out;
}

InspectReport inspect_files(const std::vector<std::filesystem::path>& paths, const io::ReadOptions& options) {
  InspectReport report;
  for (const auto& path : paths) report.files.push_back(inspect_one(path, options));
  return report;
}

}  // namespace libseq::pipeline
