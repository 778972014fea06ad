#include "libseq/io/csv_reader.hpp"

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <fstream>
#include <limits>
#include <map>
#include <optional>
#include <set>
#include <utility>

#include "libseq/error.hpp"
#include "reader_impl.hpp"

namespace libseq::io {

namespace {

std::string_view trim(std::string_view text) {
  while (!text.empty() && std::isspace(static_cast<unsigned char>(text.front()))) text.remove_prefix(1);
  while (!text.empty() && std::isspace(static_cast<unsigned char>(text.back()))) text.remove_suffix(1);
  return text;
}

std::string lower(std::string_view text) {
  std::string out(text);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

// Where a message points: "file x.csv, line 12" (and a column when known).
std::string at_line(std::string_view source, std::size_t line) {
  return std::string(source) + ", line " + std::to_string(line);
}

// Splits one line into fields; a field may be wrapped in double quotes, with "" standing for one quote inside
// (RFC 4180, section 2, rules 5-7; quoted line breaks are not accepted). Fields are trimmed.
std::vector<std::string> split_fields(std::string_view line, std::string_view source, std::size_t line_number) {
  std::vector<std::string> fields;
  std::string field;
  bool quoted = false;
  bool was_quoted = false;
  for (std::size_t i = 0; i < line.size(); ++i) {
    const char c = line[i];
    if (quoted) {
      if (c == '"' && i + 1 < line.size() && line[i + 1] == '"') {
        field += '"';
        ++i;
      } else if (c == '"') {
        quoted = false;
      } else {
        field += c;
      }
    } else if (c == '"' && trim(field).empty()) {
      quoted = true;
      was_quoted = true;
      field.clear();
    } else if (c == ',') {
      fields.emplace_back(was_quoted ? field : std::string(trim(field)));
      field.clear();
      was_quoted = false;
    } else if (!(was_quoted && std::isspace(static_cast<unsigned char>(c)))) {
      field += c;
    }
  }
  if (quoted) throw FormatError(at_line(source, line_number) + ": a quoted field is not closed");
  fields.emplace_back(was_quoted ? field : std::string(trim(field)));
  return fields;
}

// One value cell: empty, NA or NaN (any case) is missing; anything else must be a finite number in float range.
float parse_value(std::string_view text, std::string_view source, std::size_t line, std::string_view column) {
  const std::string key = lower(text);
  if (key.empty() || key == "na" || key == "nan") return data::missing_value;
  auto where = [&] { return at_line(source, line) + ", column '" + std::string(column) + "'"; };
  std::string_view digits = text;
  if (key == "inf" || key == "+inf" || key == "-inf" || key == "infinity" || key == "+infinity" || key == "-infinity") {
    throw DataError(where() + ": infinite value '" + std::string(text) +
                    "' refused (write a missing value as an empty cell, NA or NaN)");
  }
  if (!digits.empty() && digits.front() == '+') digits.remove_prefix(1);
  double value = 0;
  const auto [end, ec] = std::from_chars(digits.data(), digits.data() + digits.size(), value);
  if (ec == std::errc::result_out_of_range ||
      (ec == std::errc() && std::isfinite(value) && std::fabs(value) > std::numeric_limits<float>::max())) {
    throw DataError(where() + ": '" + std::string(text) + "' is out of the float range");
  }
  if (ec != std::errc() || end != digits.data() + digits.size() || !std::isfinite(value)) {
    throw DataError(where() + ": '" + std::string(text) + "' is not a number");
  }
  return static_cast<float>(value);
}

double parse_metadata_number(std::string_view text, std::string_view source, std::size_t line, std::string_view key) {
  const float value = parse_value(trim(text), source, line, "# " + std::string(key));
  return std::isnan(value) ? std::numeric_limits<double>::quiet_NaN() : static_cast<double>(value);
}

struct Row {
  std::size_t line = 0;
  data::UtcSeconds time = 0;
  std::vector<float> values;  // one per chosen variable
};

// Metadata from `# key: value` and `# key name: value` comment lines.
struct Comments {
  std::map<std::string, std::string> plain;                         // key → value
  std::map<std::string, std::map<std::string, std::string>> named;  // key → name → value
  std::map<std::string, std::size_t> lines;                         // "key name" → line number
};

void parse_comment(std::string_view text, std::size_t line, Comments& comments) {
  text = trim(text.substr(text.find('#') + 1));
  const auto colon = text.find(':');
  if (colon == std::string_view::npos) return;  // a plain remark
  const std::string_view key_part = trim(text.substr(0, colon));
  const std::string value(trim(text.substr(colon + 1)));
  const auto space = key_part.find_first_of(" \t");
  if (space == std::string_view::npos) {
    comments.plain[std::string(key_part)] = value;
    comments.lines[std::string(key_part)] = line;
  } else {
    const std::string key(key_part.substr(0, space));
    const std::string name(trim(key_part.substr(space)));
    comments.named[key][name] = value;
    comments.lines[key + " " + name] = line;
  }
}

void apply_site_metadata(data::SiteInfo& site, const Comments& comments, std::string_view source, bool one_site_form) {
  auto lookup = [&](const std::string& key) -> std::optional<std::pair<std::string, std::size_t>> {
    if (one_site_form) {
      if (auto it = comments.plain.find(key); it != comments.plain.end()) {
        return std::pair{it->second, comments.lines.at(key)};
      }
      return std::nullopt;
    }
    if (auto it = comments.named.find(key); it != comments.named.end()) {
      if (auto jt = it->second.find(site.id); jt != it->second.end()) {
        return std::pair{jt->second, comments.lines.at(key + " " + site.id)};
      }
    }
    return std::nullopt;
  };
  if (auto name = lookup("name")) site.name = name->first;
  if (auto v = lookup("latitude")) site.latitude = parse_metadata_number(v->first, source, v->second, "latitude");
  if (auto v = lookup("longitude")) site.longitude = parse_metadata_number(v->first, source, v->second, "longitude");
  if (auto v = lookup("elevation")) site.elevation = parse_metadata_number(v->first, source, v->second, "elevation");
}

}  // namespace

ReadResult read_csv(const std::filesystem::path& path, const ReadOptions& options) {
  const std::string source = path.string();
  std::error_code ec;
  if (!std::filesystem::exists(path, ec)) throw IoError(source + ": file not found");
  if (std::filesystem::is_directory(path, ec)) throw IoError(source + ": is a directory, expected a file");
  std::ifstream in(path, std::ios::binary);
  if (!in) throw IoError(source + ": cannot open for reading");

  Comments comments;
  std::vector<std::string> header;
  std::size_t header_line = 0;
  bool long_form = false;
  std::vector<data::VariableInfo> available;
  std::vector<std::size_t> chosen;      // indices into available
  std::vector<std::string> site_order;  // long form: ids in order of first appearance
  std::map<std::string, std::vector<Row>> rows_by_site;
  std::vector<Row> rows;  // one-site form

  std::string text;
  std::size_t line_number = 0;
  while (std::getline(in, text)) {
    ++line_number;
    if (!text.empty() && text.back() == '\r') text.pop_back();
    if (line_number == 1 && text.rfind("\xEF\xBB\xBF", 0) == 0) text.erase(0, 3);  // UTF-8 byte order mark
    const std::string_view line = trim(text);
    if (line.empty()) continue;
    if (line.front() == '#') {
      parse_comment(line, line_number, comments);
      continue;
    }
    if (header.empty()) {
      header = split_fields(line, source, line_number);
      header_line = line_number;
      if (header.size() >= 2 && header[0] == "site" && header[1] == "time") {
        long_form = true;
      } else if (header[0] != "time") {
        throw FormatError(at_line(source, line_number) + ": header '" + std::string(line) +
                          "' must begin with 'time' (one site per file) or 'site,time' (long form)");
      }
      const std::size_t first = long_form ? 2 : 1;
      if (header.size() <= first) {
        throw FormatError(at_line(source, line_number) + ": header has no variable columns after '" +
                          header[first - 1] + "'");
      }
      std::set<std::string> seen{header.begin(), header.begin() + static_cast<std::ptrdiff_t>(first)};
      for (std::size_t c = first; c < header.size(); ++c) {
        if (header[c].empty()) {
          throw FormatError(at_line(source, line_number) + ": column " + std::to_string(c + 1) + " has no name");
        }
        if (!seen.insert(header[c]).second) {
          throw FormatError(at_line(source, line_number) + ": column '" + header[c] + "' appears twice");
        }
        data::VariableInfo info;
        info.name = header[c];
        available.push_back(std::move(info));
      }
      // Variable metadata comments must come before the header, so that selection by standard_name works here.
      for (auto& info : available) {
        auto named = [&](const char* key) {
          const auto it = comments.named.find(key);
          if (it == comments.named.end()) return std::string();
          const auto jt = it->second.find(info.name);
          return jt == it->second.end() ? std::string() : jt->second;
        };
        info.units = named("units");
        info.standard_name = named("standard_name");
        info.long_name = named("long_name");
      }
      chosen = detail::select_variables(available, options.variables, source);
      continue;
    }
    const auto fields = split_fields(line, source, line_number);
    if (fields.size() != header.size()) {
      throw FormatError(at_line(source, line_number) + ": " + std::to_string(fields.size()) + " fields, but the " +
                        "header (line " + std::to_string(header_line) + ") has " + std::to_string(header.size()));
    }
    const std::size_t time_column = long_form ? 1 : 0;
    Row row;
    row.line = line_number;
    row.time = data::parse_iso8601(fields[time_column], at_line(source, line_number) + ", column 'time'");
    const std::size_t first = time_column + 1;
    row.values.reserve(chosen.size());
    for (std::size_t v : chosen) {
      row.values.push_back(parse_value(fields[first + v], source, line_number, header[first + v]));
    }
    if (long_form) {
      if (fields[0].empty()) throw FormatError(at_line(source, line_number) + ": column 'site' is empty");
      auto [it, inserted] = rows_by_site.try_emplace(fields[0]);
      if (inserted) site_order.push_back(fields[0]);
      it->second.push_back(std::move(row));
    } else {
      rows.push_back(std::move(row));
    }
  }
  if (in.bad()) throw IoError(source + ": reading failed");
  if (header.empty()) {
    throw FormatError(source + ": no header line; expected 'time,<variable>...' or 'site,time,<variable>...'");
  }

  std::vector<data::VariableInfo> variables;
  for (std::size_t v : chosen) variables.push_back(available[v]);
  ReadResult result;

  if (!long_form) {
    data::SiteInfo site;
    const auto id = comments.plain.find("site_id");
    site.id = id != comments.plain.end() && !id->second.empty() ? id->second : path.stem().string();
    apply_site_metadata(site, comments, source, true);
    detail::select_sites({site.id}, options.sites, source);  // throws when another site was asked for
    if (rows.empty())
      throw DataError(source + ": no data rows after the header (line " + std::to_string(header_line) + ")");
    std::vector<data::UtcSeconds> times;
    for (const auto& row : rows) times.push_back(row.time);
    const auto axis =
        detail::regular_axis(times, source, [&](std::size_t i) { return "line " + std::to_string(rows[i].line); });
    result.panel = data::Panel(axis, {std::move(site)}, std::move(variables));
    for (std::size_t t = 0; t < rows.size(); ++t) {
      for (std::size_t j = 0; j < chosen.size(); ++j) result.panel.at(0, t, j) = rows[t].values[j];
    }
  } else {
    if (site_order.empty())
      throw DataError(source + ": no data rows after the header (line " + std::to_string(header_line) + ")");
    const auto chosen_sites = detail::select_sites(site_order, options.sites, source);
    // Every site is checked on its own (strictly increasing, one step); then all must share that step and lie
    // on one grid, and the panel spans the earliest to the latest time, NaN where a site has no row.
    std::int64_t step = 0;
    std::string step_site;
    std::vector<data::TimeAxis> site_axes;
    for (std::size_t s : chosen_sites) {
      const auto& site_rows = rows_by_site[site_order[s]];
      std::vector<data::UtcSeconds> times;
      for (const auto& row : site_rows) times.push_back(row.time);
      const auto axis = detail::regular_axis(times, source + ", site '" + site_order[s] + "'", [&](std::size_t i) {
        return "line " + std::to_string(site_rows[i].line);
      });
      if (site_rows.size() >= 2) {
        if (step == 0) {
          step = axis.step_seconds();
          step_site = site_order[s];
        } else if (axis.step_seconds() != step) {
          throw DataError(at_line(source, site_rows[1].line) + ": site '" + site_order[s] + "' has a step of " +
                          std::to_string(axis.step_seconds()) + " s, but site '" + step_site + "' has " +
                          std::to_string(step) + " s (one regular step is required)");
        }
      }
      site_axes.push_back(axis);
    }
    if (step == 0) step = 86400;
    data::UtcSeconds start = site_axes[0].start();
    data::UtcSeconds end = site_axes[0].end();
    for (const auto& axis : site_axes) {
      start = std::min(start, axis.start());
      end = std::max(end, axis.end());
    }
    for (std::size_t k = 0; k < chosen_sites.size(); ++k) {
      if ((site_axes[k].start() - start) % step != 0) {
        const auto& site_rows = rows_by_site[site_order[chosen_sites[k]]];
        throw DataError(at_line(source, site_rows[0].line) + ": site '" + site_order[chosen_sites[k]] + "' starts at " +
                        data::format_iso8601(site_axes[k].start()) + ", which is not on the " + std::to_string(step) +
                        " s grid starting at " + data::format_iso8601(start) + " (irregular step)");
      }
    }
    const data::TimeAxis axis(start, step, static_cast<std::size_t>((end - start) / step + 1));
    std::vector<data::SiteInfo> sites;
    for (std::size_t s : chosen_sites) {
      data::SiteInfo site;
      site.id = site_order[s];
      apply_site_metadata(site, comments, source, false);
      sites.push_back(std::move(site));
    }
    result.panel = data::Panel(axis, std::move(sites), std::move(variables));
    for (std::size_t k = 0; k < chosen_sites.size(); ++k) {
      for (const auto& row : rows_by_site[site_order[chosen_sites[k]]]) {
        const auto t = static_cast<std::size_t>(axis.index_of(row.time));
        for (std::size_t j = 0; j < chosen.size(); ++j) result.panel.at(k, t, j) = row.values[j];
      }
    }
  }
  result.panel.add_source(source);
  detail::finish_panel(result, options, source);
  return result;
}

}  // namespace libseq::io
