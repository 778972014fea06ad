#include "libseq/io/netcdf_reader.hpp"

#include <netcdf.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstring>
#include <limits>
#include <optional>
#include <set>

#include "libseq/data/calendar.hpp"
#include "libseq/data/units.hpp"
#include "libseq/error.hpp"

namespace libseq::io {

namespace {

using data::UtcSeconds;

std::string lower(std::string_view text) {
  std::string out(text);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

std::string strip(std::string text) {
  while (!text.empty() && (text.back() == '\0' || std::isspace(static_cast<unsigned char>(text.back())))) {
    text.pop_back();
  }
  std::size_t first = 0;
  while (first < text.size() && std::isspace(static_cast<unsigned char>(text[first]))) ++first;
  return text.substr(first);
}

// Owns an open NetCDF id and turns NetCDF status codes into libseq exceptions that name the file.
class NcFile {
 public:
  explicit NcFile(const std::filesystem::path& path) : path_(path.string()) {
    std::error_code ec;
    if (!std::filesystem::exists(path, ec)) {
      throw IoError("NetCDF file '" + path_ + "': no such file");
    }
    if (std::filesystem::is_directory(path, ec)) {
      throw IoError("NetCDF file '" + path_ + "': is a directory, expected a file");
    }
    const int status = nc_open(path_.c_str(), NC_NOWRITE, &id_);
    if (status == NC_ENOTNC) {
      throw FormatError("NetCDF file '" + path_ + "': not a NetCDF file (" + nc_strerror(status) + ")");
    }
    if (status != NC_NOERR) {
      throw IoError("NetCDF file '" + path_ + "': cannot be opened (" + nc_strerror(status) +
                    "); the file may be truncated or damaged");
    }
  }
  ~NcFile() { nc_close(id_); }
  NcFile(const NcFile&) = delete;
  NcFile& operator=(const NcFile&) = delete;

  int id() const { return id_; }
  const std::string& path() const { return path_; }

  /// "file 'x.nc', variable 'q'" for messages.
  std::string where(std::string_view variable) const {
    return "NetCDF file '" + path_ + "', variable '" + std::string(variable) + "'";
  }
  std::string where() const { return "NetCDF file '" + path_ + "'"; }

  void check(int status, const std::string& context) const {
    if (status != NC_NOERR) {
      throw IoError(context + ": " + std::string(nc_strerror(status)) + " (the file may be truncated or damaged)");
    }
  }

 private:
  std::string path_;
  int id_ = -1;
};

struct VarInfo {
  int id = -1;
  std::string name;
  nc_type type = NC_NAT;
  std::vector<int> dims;
};

bool is_text(nc_type t) { return t == NC_CHAR || t == NC_STRING; }

std::optional<std::string> text_attribute(const NcFile& f, int var, const char* name) {
  nc_type type;
  std::size_t length;
  if (nc_inq_att(f.id(), var, name, &type, &length) != NC_NOERR) return std::nullopt;
  if (type == NC_CHAR) {
    std::string value(length, '\0');
    f.check(nc_get_att_text(f.id(), var, name, value.data()), f.where() + ", attribute '" + name + "'");
    return strip(value);
  }
  if (type == NC_STRING && length >= 1) {
    std::vector<char*> values(length, nullptr);
    f.check(nc_get_att_string(f.id(), var, name, values.data()), f.where() + ", attribute '" + name + "'");
    std::string value = values[0] ? values[0] : "";
    nc_free_string(length, values.data());
    return strip(value);
  }
  return std::nullopt;
}

std::optional<std::vector<double>> numeric_attribute(const NcFile& f, int var, const char* name) {
  nc_type type;
  std::size_t length;
  if (nc_inq_att(f.id(), var, name, &type, &length) != NC_NOERR) return std::nullopt;
  if (is_text(type) || length == 0) return std::nullopt;
  std::vector<double> values(length);
  f.check(nc_get_att_double(f.id(), var, name, values.data()), f.where() + ", attribute '" + name + "'");
  return values;
}

// CF section 2.5.1 and 8.1: which packed values are missing, and how to unpack the rest.
struct Packing {
  std::vector<double> missing;  // _FillValue and every missing_value
  double valid_min = -std::numeric_limits<double>::infinity();
  double valid_max = std::numeric_limits<double>::infinity();
  double scale = 1.0;
  double offset = 0.0;

  static Packing of(const NcFile& f, int var) {
    Packing p;
    if (auto fill = numeric_attribute(f, var, "_FillValue")) p.missing.push_back((*fill)[0]);
    if (auto mv = numeric_attribute(f, var, "missing_value")) p.missing.insert(p.missing.end(), mv->begin(), mv->end());
    if (auto range = numeric_attribute(f, var, "valid_range"); range && range->size() >= 2) {
      p.valid_min = (*range)[0];
      p.valid_max = (*range)[1];
    }
    if (auto v = numeric_attribute(f, var, "valid_min")) p.valid_min = (*v)[0];
    if (auto v = numeric_attribute(f, var, "valid_max")) p.valid_max = (*v)[0];
    if (auto v = numeric_attribute(f, var, "scale_factor")) p.scale = (*v)[0];
    if (auto v = numeric_attribute(f, var, "add_offset")) p.offset = (*v)[0];
    return p;
  }

  // NaN for a missing packed value, the unpacked value otherwise. The comparisons are on the packed values, as CF
  // requires; unpacking is in double (CF 8.1: unpacked = packed * scale_factor + add_offset).
  double unpack(double packed) const {
    if (std::isnan(packed)) return packed;
    for (const double m : missing) {
      if (packed == m) return std::numeric_limits<double>::quiet_NaN();
    }
    if (packed < valid_min || packed > valid_max) return std::numeric_limits<double>::quiet_NaN();
    return packed * scale + offset;
  }
};

enum class Layout { single, orthogonal, incomplete, ragged };

struct DataVar {
  VarInfo var;
  Packing packing;
  bool station_first = true;  // (station, time|obs) rather than (time|obs, station)
  std::string target_units;   // empty: no conversion
  data::VariableInfo info;
};

std::string dims_text(const NcFile& f, const std::vector<int>& dims) {
  std::string out = "(";
  for (std::size_t i = 0; i < dims.size(); ++i) {
    char name[NC_MAX_NAME + 1] = {0};
    nc_inq_dimname(f.id(), dims[i], name);
    if (i) out += ", ";
    out += name;
  }
  return out + ")";
}

std::vector<VarInfo> list_variables(const NcFile& f) {
  int count = 0;
  f.check(nc_inq_nvars(f.id(), &count), f.where() + ": listing variables");
  std::vector<VarInfo> out(static_cast<std::size_t>(count));
  for (int v = 0; v < count; ++v) {
    char name[NC_MAX_NAME + 1] = {0};
    int ndims = 0;
    int dims[NC_MAX_VAR_DIMS];
    f.check(nc_inq_var(f.id(), v, name, &out[v].type, &ndims, dims, nullptr), f.where() + ": variable header");
    out[v].id = v;
    out[v].name = name;
    out[v].dims.assign(dims, dims + ndims);
  }
  return out;
}

std::size_t dim_length(const NcFile& f, int dim) {
  std::size_t length = 0;
  f.check(nc_inq_dimlen(f.id(), dim, &length), f.where() + ": dimension length");
  return length;
}

// Station ids (or names) from a text variable: char (station, strlen), NC_STRING (station), or the scalar forms of a
// single-station file; integer ids are printed.
std::vector<std::string> read_labels(const NcFile& f, const VarInfo& v, std::size_t stations) {
  std::vector<std::string> out(stations);
  const std::string context = f.where(v.name) + ": reading station labels";
  if (v.type == NC_CHAR) {
    const std::size_t width = v.dims.empty() ? 1 : dim_length(f, v.dims.back());
    std::vector<char> buffer(stations * width);
    if (!buffer.empty()) f.check(nc_get_var_text(f.id(), v.id, buffer.data()), context);
    for (std::size_t s = 0; s < stations; ++s) out[s] = strip(std::string(buffer.data() + s * width, width));
  } else if (v.type == NC_STRING) {
    std::vector<char*> buffer(stations, nullptr);
    f.check(nc_get_var_string(f.id(), v.id, buffer.data()), context);
    for (std::size_t s = 0; s < stations; ++s) out[s] = strip(buffer[s] ? buffer[s] : "");
    nc_free_string(stations, buffer.data());
  } else {
    std::vector<long long> buffer(stations);
    f.check(nc_get_var_longlong(f.id(), v.id, buffer.data()), context);
    for (std::size_t s = 0; s < stations; ++s) out[s] = std::to_string(buffer[s]);
  }
  return out;
}

// Numeric per-station values, missing → NaN, unpacked.
std::vector<double> read_station_numbers(const NcFile& f, const VarInfo& v, std::size_t stations) {
  std::vector<double> out(stations);
  f.check(nc_get_var_double(f.id(), v.id, out.data()), f.where(v.name) + ": reading station values");
  const Packing p = Packing::of(f, v.id);
  for (double& x : out) x = p.unpack(x);
  return out;
}

// Whether a per-station variable has the station shape: (station) or, for text, (station, strlen); scalar (or
// (strlen) text) when the file has one station and no station dimension.
bool on_station_dim(const VarInfo& v, std::optional<int> station_dim) {
  if (!station_dim) return v.dims.empty() || (v.type == NC_CHAR && v.dims.size() == 1);
  if (v.dims.empty() || v.dims[0] != *station_dim) return false;
  return v.dims.size() == 1 || (v.type == NC_CHAR && v.dims.size() == 2);
}

// Values are read one station at a time and each chunk is needed for one station (or a few neighbours), so the
// HDF5 chunk cache of the NetCDF-4 default (tens of MB per variable, filled and never reused) only costs memory:
// on the 1,000-station benchmark it doubled the peak RSS. Keep room for two chunks, between 1 and 32 MB.
// Classic files have no chunk cache; the call's error is then ignored.
void limit_chunk_cache(const NcFile& f, const VarInfo& v) {
  int storage = 0;
  std::vector<std::size_t> chunks(v.dims.size() + 1, 0);
  if (v.dims.empty() || nc_inq_var_chunking(f.id(), v.id, &storage, chunks.data()) != NC_NOERR ||
      storage != NC_CHUNKED) {
    return;
  }
  std::size_t type_size = 0;
  if (nc_inq_type(f.id(), v.type, nullptr, &type_size) != NC_NOERR) return;
  std::size_t chunk_bytes = type_size;
  for (std::size_t d = 0; d < v.dims.size(); ++d) chunk_bytes *= chunks[d];
  const std::size_t cache = std::clamp<std::size_t>(2 * chunk_bytes, std::size_t{1} << 20, std::size_t{32} << 20);
  nc_set_var_chunk_cache(f.id(), v.id, cache, 1009, 0.75f);
}

std::string first_ids(const std::vector<std::string>& ids) {
  std::string out;
  for (std::size_t i = 0; i < ids.size() && i < 20; ++i) out += (i ? ", " : "") + ids[i];
  if (ids.size() > 20) out += ", ... (" + std::to_string(ids.size()) + " in all)";
  return out;
}

}  // namespace

ReadResult read_netcdf(const std::filesystem::path& path, const ReadOptions& options) {
  NcFile f(path);
  const std::vector<VarInfo> vars = list_variables(f);
  auto attr = [&](const VarInfo& v, const char* name) { return text_attribute(f, v.id, name).value_or(""); };

  if (auto feature = text_attribute(f, NC_GLOBAL, "featureType"); feature && lower(*feature) != "timeseries") {
    throw FormatError(f.where() + ": featureType is '" + *feature +
                      "'; only CF discrete sampling geometry featureType = \"timeSeries\" is read");
  }

  // --- Time coordinate ---------------------------------------------------------------------------------------------
  // First a variable that is marked as time and has "since" units, then any with "since" units, then any marked
  // as time (its units are then reported as not understood).
  const VarInfo* time_var = nullptr;
  auto marked_time = [&](const VarInfo& v) {
    return lower(attr(v, "standard_name")) == "time" || lower(attr(v, "axis")) == "t" || lower(v.name) == "time";
  };
  auto since_units = [&](const VarInfo& v) { return lower(attr(v, "units")).find(" since ") != std::string::npos; };
  for (int pass = 0; pass < 3 && time_var == nullptr; ++pass) {
    for (const auto& v : vars) {
      if (is_text(v.type)) continue;
      const bool match = pass == 0 ? marked_time(v) && since_units(v) : pass == 1 ? since_units(v) : marked_time(v);
      if (match) {
        time_var = &v;
        break;
      }
    }
  }
  if (time_var == nullptr) {
    throw FormatError(f.where() + ": no time coordinate (a variable with standard_name \"time\", axis \"T\" or "
                                  "units \"<unit> since <date>\")");
  }
  const std::string time_where = f.where(time_var->name);
  const data::Calendar calendar = data::parse_calendar(attr(*time_var, "calendar"), time_where);
  const std::string time_units_text = attr(*time_var, "units");
  if (time_units_text.empty()) throw FormatError(time_where + ": the time coordinate has no units attribute");
  const data::TimeUnits time_units = data::parse_time_units(time_units_text, calendar, time_where);
  if (!data::maps_to_utc(calendar)) data::to_utc({}, calendar, time_where);  // throws the 360_day refusal

  // --- Layout ------------------------------------------------------------------------------------------------------
  const VarInfo* count_var = nullptr;
  for (const auto& v : vars) {
    if (text_attribute(f, v.id, "sample_dimension")) count_var = &v;
  }
  const VarInfo* id_var = nullptr;
  for (const auto& v : vars) {
    if (attr(v, "cf_role") == "timeseries_id") id_var = &v;
  }
  Layout layout;
  std::optional<int> station_dim;
  int sample_dim = -1;  // time dimension (orthogonal/single), obs dimension (incomplete) or sample dimension (ragged)
  if (count_var != nullptr) {
    layout = Layout::ragged;
    if (count_var->dims.size() != 1) {
      throw FormatError(f.where(count_var->name) + ": a ragged-array count variable must be 1-D on the station "
                                                   "dimension, found " + dims_text(f, count_var->dims));
    }
    station_dim = count_var->dims[0];
    const std::string sample_name = attr(*count_var, "sample_dimension");
    if (nc_inq_dimid(f.id(), sample_name.c_str(), &sample_dim) != NC_NOERR) {
      throw FormatError(f.where(count_var->name) + ": sample_dimension '" + sample_name + "' is not a dimension");
    }
    if (time_var->dims != std::vector<int>{sample_dim}) {
      throw FormatError(time_where + ": in a contiguous ragged array the time must be 1-D on the sample dimension '" +
                        sample_name + "', found " + dims_text(f, time_var->dims));
    }
  } else if (time_var->dims.size() == 2) {
    layout = Layout::incomplete;
    station_dim = time_var->dims[0];
    sample_dim = time_var->dims[1];
    if (id_var != nullptr && !id_var->dims.empty() && id_var->dims[0] == time_var->dims[1]) {
      std::swap(*station_dim, sample_dim);
    }
  } else if (time_var->dims.size() == 1) {
    sample_dim = time_var->dims[0];
    const bool id_has_station_dim =
        id_var != nullptr && !id_var->dims.empty() && !(id_var->type == NC_CHAR && id_var->dims.size() == 1);
    if (id_has_station_dim) {
      layout = Layout::orthogonal;
      station_dim = id_var->dims[0];
    } else {
      layout = Layout::single;
    }
  } else {
    throw FormatError(time_where + ": the time coordinate must be 1-D (time) or 2-D (station, obs), found " +
                      dims_text(f, time_var->dims));
  }
  const std::size_t station_count = station_dim ? dim_length(f, *station_dim) : 1;
  const std::size_t sample_count = dim_length(f, sample_dim);

  // --- Data variables ----------------------------------------------------------------------------------------------
  auto shape_ok = [&](const VarInfo& v, bool& station_first) {
    station_first = true;
    switch (layout) {
      case Layout::single:
      case Layout::ragged:
        return v.dims == std::vector<int>{sample_dim};
      case Layout::orthogonal:
      case Layout::incomplete:
        if (v.dims == std::vector<int>{*station_dim, sample_dim}) return true;
        station_first = false;
        return v.dims == std::vector<int>{sample_dim, *station_dim};
    }
    return false;
  };
  std::vector<std::string> candidates;
  for (const auto& v : vars) {
    bool station_first;
    if (&v == time_var || &v == count_var || is_text(v.type) || !shape_ok(v, station_first)) continue;
    candidates.push_back(v.name);
  }
  std::vector<std::string> requested = options.variables.empty() ? candidates : options.variables;
  if (requested.empty()) {
    throw DataError(f.where() + ": no data variable on the time dimension " + dims_text(f, time_var->dims));
  }
  std::vector<DataVar> data_vars;
  for (const std::string& key : requested) {
    const VarInfo* found = nullptr;
    for (const auto& v : vars) {
      if (v.name == key) found = &v;
    }
    for (std::size_t i = 0; found == nullptr && i < vars.size(); ++i) {
      if (attr(vars[i], "standard_name") == key && !is_text(vars[i].type) && &vars[i] != time_var) found = &vars[i];
    }
    if (found == nullptr) {
      std::string present;
      for (const auto& name : candidates) {
        const std::string standard = attr(vars[static_cast<std::size_t>(
                                              std::find_if(vars.begin(), vars.end(),
                                                           [&](const VarInfo& v) { return v.name == name; }) -
                                              vars.begin())],
                                          "standard_name");
        present += (present.empty() ? "" : ", ") + name + (standard.empty() ? "" : " (" + standard + ")");
      }
      throw DataError(f.where() + ": variable '" + key + "' not found by name or standard_name; data variables " +
                      "present: " + (present.empty() ? "none" : present));
    }
    DataVar dv;
    dv.var = *found;
    if (is_text(found->type) || !shape_ok(*found, dv.station_first)) {
      const std::string expected =
          layout == Layout::single || layout == Layout::ragged
              ? dims_text(f, {sample_dim})
              : dims_text(f, {*station_dim, sample_dim}) + " or " + dims_text(f, {sample_dim, *station_dim});
      throw FormatError(f.where(found->name) + ": has dimensions " + dims_text(f, found->dims) +
                        (is_text(found->type) ? " and text type" : "") + "; expected a numeric variable on " +
                        expected + " like the time coordinate '" + time_var->name + "'");
    }
    limit_chunk_cache(f, *found);
    dv.packing = Packing::of(f, found->id);
    dv.info.name = found->name;
    dv.info.units = attr(*found, "units");
    dv.info.standard_name = attr(*found, "standard_name");
    dv.info.long_name = attr(*found, "long_name");
    data_vars.push_back(std::move(dv));
  }
  for (const auto& [key, units] : options.target_units) {
    bool matched = false;
    for (auto& dv : data_vars) {
      if (dv.info.name != key && (dv.info.standard_name.empty() || dv.info.standard_name != key)) continue;
      matched = true;
      if (!data::can_convert(dv.info.units, units)) {
        data::convert_units({}, dv.info.units, units, f.where(dv.info.name));  // throws the full message
      }
      dv.target_units = units;
    }
    if (!matched) {
      throw DataError(f.where() + ": target units given for '" + key + "', which is not among the variables read");
    }
  }

  // --- Stations ----------------------------------------------------------------------------------------------------
  std::vector<std::string> ids;
  if (id_var != nullptr) {
    if (!on_station_dim(*id_var, station_dim)) {
      throw FormatError(f.where(id_var->name) + ": the timeseries_id variable has dimensions " +
                        dims_text(f, id_var->dims) + "; expected the station dimension");
    }
    ids = read_labels(f, *id_var, station_count);
  } else if (layout == Layout::single) {
    ids = {path.stem().string()};
  } else {
    throw FormatError(f.where() + ": no variable with cf_role = \"timeseries_id\" for the station dimension " +
                      dims_text(f, {*station_dim}));
  }
  std::vector<data::SiteInfo> all_sites(station_count);
  for (std::size_t s = 0; s < station_count; ++s) all_sites[s].id = ids[s];

  std::set<std::string> coordinate_names;
  {
    const std::string listed = attr(data_vars.front().var, "coordinates");
    std::size_t pos = 0;
    while (pos < listed.size()) {
      const std::size_t end = std::min(listed.find(' ', pos), listed.size());
      if (end > pos) coordinate_names.insert(listed.substr(pos, end - pos));
      pos = end + 1;
    }
  }
  for (const auto& v : vars) {
    if (&v == id_var || &v == count_var || &v == time_var || !on_station_dim(v, station_dim)) continue;
    const std::string standard = lower(attr(v, "standard_name"));
    const std::string axis = lower(attr(v, "axis"));
    const std::string units = lower(attr(v, "units"));
    const std::string name = lower(v.name);
    const bool listed = coordinate_names.count(v.name) > 0;
    if (is_text(v.type)) {
      const bool is_name = standard == "platform_name" || name.find("name") != std::string::npos ||
                           lower(attr(v, "long_name")).find("name") != std::string::npos;
      if (is_name) {
        const auto labels = read_labels(f, v, station_count);
        for (std::size_t s = 0; s < station_count; ++s) all_sites[s].name = labels[s];
      }
      continue;
    }
    double data::SiteInfo::*field = nullptr;
    if (standard == "latitude" || axis == "y" || units == "degrees_north" || units == "degree_north" ||
        (listed && (name == "lat" || name == "latitude"))) {
      field = &data::SiteInfo::latitude;
    } else if (standard == "longitude" || axis == "x" || units == "degrees_east" || units == "degree_east" ||
               (listed && (name == "lon" || name == "longitude"))) {
      field = &data::SiteInfo::longitude;
    } else if (standard == "height" || standard == "altitude" || standard == "surface_altitude" || axis == "z" ||
               (listed && (name == "alt" || name == "altitude" || name == "elevation" || name == "height"))) {
      field = &data::SiteInfo::elevation;
    }
    const auto values = read_station_numbers(f, v, station_count);
    for (std::size_t s = 0; s < station_count; ++s) {
      if (field) {
        all_sites[s].*field = values[s];
      } else {
        all_sites[s].attributes[v.name] = values[s];
      }
    }
  }

  // Which file stations to read, in the order asked.
  std::vector<std::size_t> chosen;
  if (options.sites.empty()) {
    for (std::size_t s = 0; s < station_count; ++s) chosen.push_back(s);
  } else {
    std::set<std::string> seen;
    for (const auto& wanted : options.sites) {
      if (!seen.insert(wanted).second) continue;
      const auto it = std::find(ids.begin(), ids.end(), wanted);
      if (it == ids.end()) {
        throw DataError(f.where() + ": site '" + wanted + "' not found; sites present: " + first_ids(ids));
      }
      chosen.push_back(static_cast<std::size_t>(it - ids.begin()));
    }
  }

  // --- Times -------------------------------------------------------------------------------------------------------
  // For each chosen station, the axis index of every sample it holds (-1: no time, not read).
  const Packing time_packing = Packing::of(f, time_var->id);
  auto decode_series = [&](std::span<double> raw, const std::string& what) {
    std::vector<UtcSeconds> utc(raw.size(), std::numeric_limits<UtcSeconds>::min());
    for (std::size_t i = 0; i < raw.size(); ++i) {
      const double value = time_packing.unpack(raw[i]);
      if (std::isnan(value)) continue;
      const std::string at = what + ", index " + std::to_string(i);
      utc[i] = data::to_utc(data::decode_time(value, time_units, calendar, at), calendar, at);
    }
    return utc;
  };
  auto check_increasing = [&](const std::vector<UtcSeconds>& utc, const std::string& what) {
    std::optional<std::size_t> previous;
    for (std::size_t i = 0; i < utc.size(); ++i) {
      if (utc[i] == std::numeric_limits<UtcSeconds>::min()) continue;
      if (previous && utc[i] <= utc[*previous]) {
        throw DataError(what + ": time at index " + std::to_string(i) + " (" + data::format_iso8601(utc[i]) +
                        (utc[i] == utc[*previous] ? ") duplicates" : ") is earlier than") + " index " +
                        std::to_string(*previous) + " (" + data::format_iso8601(utc[*previous]) +
                        "); times must be strictly increasing");
      }
      previous = i;
    }
  };

  data::TimeAxis axis;
  std::vector<std::size_t> sample_offset(station_count, 0);  // ragged: first sample of each station
  std::vector<std::size_t> sample_length(station_count, sample_count);
  // Axis index of each sample of each chosen station (-1: no time); one shared entry for a shared time coordinate.
  std::vector<std::vector<std::int64_t>> axis_index(chosen.size());
  if (layout == Layout::single || layout == Layout::orthogonal) {
    std::vector<double> raw(sample_count);
    f.check(nc_get_var_double(f.id(), time_var->id, raw.data()), time_where + ": reading times");
    std::vector<UtcSeconds> utc = decode_series(raw, time_where);
    for (std::size_t i = 0; i < utc.size(); ++i) {
      if (utc[i] == std::numeric_limits<UtcSeconds>::min()) {
        throw DataError(time_where + ": time value at index " + std::to_string(i) + " is missing; every time of " +
                        "a shared time coordinate must be set");
      }
    }
    axis = data::regular_axis(utc, calendar, time_where);
    // One shared index for every station (a copy per station would cost as much memory as a variable).
    axis_index.assign(1, std::vector<std::int64_t>(utc.size()));
    for (std::size_t i = 0; i < utc.size(); ++i) axis_index[0][i] = axis.index_of(utc[i]);
  } else {
    std::vector<UtcSeconds> all_times;
    std::vector<std::vector<UtcSeconds>> per_station(chosen.size());
    if (layout == Layout::ragged) {
      std::vector<long long> counts(station_count);
      f.check(nc_get_var_longlong(f.id(), count_var->id, counts.data()), f.where(count_var->name) + ": reading");
      std::size_t total = 0;
      for (std::size_t s = 0; s < station_count; ++s) {
        if (counts[s] < 0) {
          throw DataError(f.where(count_var->name) + ": negative count " + std::to_string(counts[s]) +
                          " for station '" + ids[s] + "'");
        }
        sample_offset[s] = total;
        sample_length[s] = static_cast<std::size_t>(counts[s]);
        total += sample_length[s];
      }
      if (total != sample_count) {
        throw FormatError(f.where(count_var->name) + ": counts add up to " + std::to_string(total) +
                          " but the sample dimension has " + std::to_string(sample_count) + " elements");
      }
    }
    for (std::size_t c = 0; c < chosen.size(); ++c) {
      const std::size_t s = chosen[c];
      std::vector<double> raw(sample_length[s]);
      if (!raw.empty()) {
        std::size_t start[2];
        std::size_t count[2];
        if (layout == Layout::ragged) {
          start[0] = sample_offset[s];
          count[0] = sample_length[s];
        } else {
          const bool station_first = time_var->dims[0] == *station_dim;
          start[station_first ? 0 : 1] = s;
          count[station_first ? 0 : 1] = 1;
          start[station_first ? 1 : 0] = 0;
          count[station_first ? 1 : 0] = sample_count;
        }
        f.check(nc_get_vara_double(f.id(), time_var->id, start, count, raw.data()), time_where + ": reading times");
      }
      const std::string what = time_where + ", station '" + ids[s] + "'";
      per_station[c] = decode_series(raw, what);
      check_increasing(per_station[c], what);
      for (const UtcSeconds t : per_station[c]) {
        if (t != std::numeric_limits<UtcSeconds>::min()) all_times.push_back(t);
      }
    }
    axis = data::union_axis(all_times, time_where);
    for (std::size_t c = 0; c < chosen.size(); ++c) {
      axis_index[c].resize(per_station[c].size());
      for (std::size_t i = 0; i < per_station[c].size(); ++i) {
        axis_index[c][i] =
            per_station[c][i] == std::numeric_limits<UtcSeconds>::min() ? -1 : axis.index_of(per_station[c][i]);
      }
    }
  }

  // --- Values, site by site straight into the panel --------------------------------------------------------------
  std::vector<data::SiteInfo> sites;
  for (const std::size_t s : chosen) sites.push_back(all_sites[s]);
  std::vector<data::VariableInfo> infos;
  for (const auto& dv : data_vars) {
    infos.push_back(dv.info);
    if (!dv.target_units.empty()) infos.back().units = dv.target_units;
  }
  ReadResult result;
  result.panel = data::Panel(axis, std::move(sites), std::move(infos));
  data::Panel& panel = result.panel;
  panel.add_source(path.string());
  const std::size_t time_count = axis.length();
  std::vector<double> raw;
  std::vector<float> series(time_count);
  std::vector<bool> drop(chosen.size(), false);
  for (std::size_t c = 0; c < chosen.size(); ++c) {
    const std::size_t s = chosen[c];
    const std::size_t n = sample_length[s];
    const std::vector<std::int64_t>& index = axis_index.size() == 1 ? axis_index[0] : axis_index[c];
    raw.resize(n);
    for (std::size_t v = 0; v < data_vars.size(); ++v) {
      const DataVar& dv = data_vars[v];
      if (n > 0) {
        std::size_t start[2] = {0, 0};
        std::size_t count[2] = {n, 1};
        if (layout == Layout::ragged) {
          start[0] = sample_offset[s];
        } else if (layout != Layout::single) {
          start[dv.station_first ? 0 : 1] = s;
          count[dv.station_first ? 0 : 1] = 1;
          count[dv.station_first ? 1 : 0] = n;
        }
        f.check(nc_get_vara_double(f.id(), dv.var.id, start, count, raw.data()),
                f.where(dv.var.name) + ", station '" + ids[s] + "': reading values");
      }
      std::fill(series.begin(), series.end(), data::missing_value);
      for (std::size_t i = 0; i < n; ++i) {
        const std::int64_t t = index[i];
        if (t < 0) continue;
        const double value = dv.packing.unpack(raw[i]);
        if (std::isinf(value)) {
          throw DataError(f.where(dv.var.name) + ": infinite value at site '" + ids[s] + "', time " +
                          data::format_iso8601(axis.time_at(static_cast<std::size_t>(t))) +
                          " (index " + std::to_string(i) + "); use _FillValue or NaN for missing data");
        }
        series[static_cast<std::size_t>(t)] = static_cast<float>(value);
      }
      if (!dv.target_units.empty()) {
        data::convert_units(series, dv.info.units, dv.target_units, f.where(dv.var.name));
      }
      for (std::size_t t = 0; t < time_count; ++t) panel.at(c, t, v) = series[t];
    }
    const auto block = panel.site_values(c);
    if (std::all_of(block.begin(), block.end(), [](float x) { return std::isnan(x); })) {
      drop[c] = true;
      result.warnings.push_back(f.where() + ": site '" + ids[s] +
                                "' skipped: every value of the variables read is missing");
    }
  }
  if (std::find(drop.begin(), drop.end(), true) != drop.end()) panel.remove_sites(drop);
  return result;
}

}  // namespace libseq::io
