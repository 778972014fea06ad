#include "demo_writers.hpp"

#include <hdf5.h>
#include <netcdf.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <fstream>
#include <limits>
#include <system_error>

#include "libseq/error.hpp"

namespace runnel_demo {

namespace fs = std::filesystem;
using libseq::data::Panel;

// --- Shared helpers --------------------------------------------------------------------------------------------------

namespace {

/// A file written under a temporary name beside its target and renamed into place by commit(); removed when the
/// writer fails before committing. rename() within one directory is atomic on POSIX file systems.
class TemporaryTarget {
 public:
  explicit TemporaryTarget(fs::path target)
      : target_(std::move(target)), temporary_(target_.string() + ".tmp-" + std::to_string(::getpid())) {}
  TemporaryTarget(const TemporaryTarget&) = delete;
  TemporaryTarget& operator=(const TemporaryTarget&) = delete;
  ~TemporaryTarget() {
    if (!committed_) {
      std::error_code ignored;
      fs::remove(temporary_, ignored);
    }
  }
  const fs::path& temporary() const { return temporary_; }
  void commit() {
    std::error_code error;
    fs::rename(temporary_, target_, error);
    if (error) {
      throw libseq::IoError("cannot rename " + temporary_.string() + " to " + target_.string() + ": " +
                            error.message());
    }
    committed_ = true;
  }

 private:
  fs::path target_;
  fs::path temporary_;
  bool committed_ = false;
};

/// Values of one variable of a panel as a [site, time] block.
std::vector<float> site_time_block(const Panel& panel, std::size_t variable) {
  std::vector<float> block(panel.site_count() * panel.time_count());
  for (std::size_t s = 0; s < panel.site_count(); ++s) {
    for (std::size_t t = 0; t < panel.time_count(); ++t) {
      block[s * panel.time_count() + t] = panel.at(s, t, variable);
    }
  }
  return block;
}

double site_attribute(const libseq::data::SiteInfo& site, const std::string& name) {
  const auto found = site.attributes.find(name);
  return found == site.attributes.end() ? std::numeric_limits<double>::quiet_NaN() : found->second;
}

}  // namespace

std::int16_t Int16Packing::pack(float value) const {
  if (!std::isfinite(value)) {
    return fill_value;
  }
  const double counts = std::nearbyint((static_cast<double>(value) - add_offset) / scale_factor);
  return static_cast<std::int16_t>(std::clamp(counts, -32766.0, 32767.0));
}

float Int16Packing::unpack(std::int16_t packed) const {
  if (packed == fill_value) {
    return std::numeric_limits<float>::quiet_NaN();
  }
  // In double, then rounded once: the float nearest the exact decoded value, which is what a reader that unpacks in
  // double (as libseq's NetCDF reader does) stores as float32.
  return static_cast<float>(static_cast<double>(packed) * scale_factor + static_cast<double>(add_offset));
}

Int16Packing choose_int16_packing(const Panel& panel, std::size_t variable) {
  float low = std::numeric_limits<float>::infinity();
  float high = -std::numeric_limits<float>::infinity();
  for (std::size_t s = 0; s < panel.site_count(); ++s) {
    for (std::size_t t = 0; t < panel.time_count(); ++t) {
      const float value = panel.at(s, t, variable);
      if (std::isfinite(value)) {
        low = std::min(low, value);
        high = std::max(high, value);
      }
    }
  }
  if (!(low <= high)) {
    throw libseq::DataError("variable " + panel.variables()[variable].name + " has no finite value to pack");
  }
  // Centre the range on packed 0 and leave a few counts of margin at both ends, so that float rounding of the
  // extremes never clamps.
  Int16Packing packing;
  packing.add_offset = 0.5f * (low + high);
  packing.scale_factor = high > low ? (high - low) / 65530.0f : 1.0f;
  return packing;
}

// --- NetCDF ----------------------------------------------------------------------------------------------------------

namespace {

class NetcdfFile {
 public:
  explicit NetcdfFile(const fs::path& path) : path_(path.string()) {
    check(nc_create(path_.c_str(), NC_NETCDF4 | NC_CLOBBER, &id_), "create file");
  }
  NetcdfFile(const NetcdfFile&) = delete;
  NetcdfFile& operator=(const NetcdfFile&) = delete;
  ~NetcdfFile() {
    if (open_) {
      nc_close(id_);
    }
  }
  int id() const { return id_; }
  void close() {
    open_ = false;
    check(nc_close(id_), "close file");
  }
  void check(int status, const std::string& what) const {
    if (status != NC_NOERR) {
      throw libseq::IoError("NetCDF file " + path_ + ": cannot " + what + ": " + nc_strerror(status));
    }
  }
  void text(int variable, const std::string& name, const std::string& value) const {
    check(nc_put_att_text(id_, variable, name.c_str(), value.size(), value.c_str()), "write attribute " + name);
  }
  int define(const std::string& name, nc_type type, std::vector<int> dimensions) const {
    int variable = -1;
    check(nc_def_var(id_, name.c_str(), type, static_cast<int>(dimensions.size()), dimensions.data(), &variable),
          "define variable " + name);
    return variable;
  }

 private:
  std::string path_;
  int id_ = -1;
  bool open_ = true;
};

std::string cf_time_units(const Panel& panel, const CfLayout& layout) {
  const libseq::data::CivilTime c = libseq::data::to_civil(panel.axis().start());
  char buffer[80];
  std::snprintf(buffer, sizeof buffer, "%s since %04d-%02d-%02d %02d:%02d:%02d", layout.time_unit.c_str(), c.year,
                c.month, c.day, c.hour, c.minute, c.second);
  return buffer;
}

void validate_layout(const Panel& panel, const CfLayout& layout, const fs::path& path) {
  std::string problems;
  if (layout.encodings.size() != panel.variable_count()) {
    problems += " encodings: " + std::to_string(layout.encodings.size()) + " given, expected one per variable (" +
                std::to_string(panel.variable_count()) + ");";
  }
  if (layout.time_unit_seconds <= 0 || panel.axis().step_seconds() % layout.time_unit_seconds != 0) {
    problems += " time_unit_seconds: " + std::to_string(layout.time_unit_seconds) +
                ", expected a positive divisor of the panel step " + std::to_string(panel.axis().step_seconds()) + ";";
  }
  if (layout.time_unit != "days" && layout.time_unit != "hours") {
    problems += " time_unit: '" + layout.time_unit + "', expected days or hours;";
  }
  if (!problems.empty()) {
    throw libseq::ConfigError("CF layout for " + path.string() + ":" + problems);
  }
}

}  // namespace

void write_cf_timeseries(const Panel& panel, const CfLayout& layout, const fs::path& path) {
  validate_layout(panel, layout, path);
  TemporaryTarget target(path);
  NetcdfFile file(target.temporary());
  const int nc = file.id();
  const std::size_t sites = panel.site_count();
  const std::size_t times = panel.time_count();

  int station_dim = -1, time_dim = -1, bounds_dim = -1;
  file.check(nc_def_dim(nc, "station", sites, &station_dim), "define dimension station");
  file.check(nc_def_dim(nc, "time", times, &time_dim), "define dimension time");
  file.check(nc_def_dim(nc, "nv", 2, &bounds_dim), "define dimension nv");

  // Global attributes: CF-1.8 section 9 (discrete sampling geometries), orthogonal multidimensional time series.
  file.text(NC_GLOBAL, "Conventions", "CF-1.8");
  file.text(NC_GLOBAL, "featureType", "timeSeries");
  file.text(NC_GLOBAL, "title", layout.title);
  file.text(NC_GLOBAL, "summary", layout.summary);
  file.text(NC_GLOBAL, "comment",
            "INVENTED DATA. Every place, river, town, feeder and value in this file is fictional and was made by a "
            "program; the coordinates lie on open ocean on purpose. Not measurements; do not use for any real "
            "decision.");
  file.text(NC_GLOBAL, "source", "synthetic: runnel_make_demo_data (data-samples/generator in the runnel sources)");
  file.text(NC_GLOBAL, "history", layout.history);
  file.text(NC_GLOBAL, "license", "CC0-1.0 (invented data, no rights reserved)");

  // Time coordinate: integer counts of the unit since the axis start; each value labels the start of its interval,
  // and time_bnds gives the interval (CF-1.8 section 7.1), so that cell_methods "time: mean" is unambiguous.
  const std::string time_units = cf_time_units(panel, layout);
  const int time_var = file.define("time", NC_INT, {time_dim});
  file.text(time_var, "standard_name", "time");
  file.text(time_var, "long_name", "start of the averaging interval");
  file.text(time_var, "units", time_units);
  file.text(time_var, "calendar", "standard");
  file.text(time_var, "axis", "T");
  file.text(time_var, "bounds", "time_bnds");
  const int bounds_var = file.define("time_bnds", NC_INT, {time_dim, bounds_dim});

  const int id_var = file.define("station_id", NC_STRING, {station_dim});
  file.text(id_var, "cf_role", "timeseries_id");
  file.text(id_var, "long_name", layout.station_kind + " identifier");
  const int name_var = file.define("station_name", NC_STRING, {station_dim});
  file.text(name_var, "long_name", layout.station_kind + " name");

  const std::string coordinates = "lat lon alt station_id";
  struct Coordinate {
    const char* name;
    const char* standard_name;
    const char* units;
    std::string long_name;
    int id = -1;
  };
  std::vector<Coordinate> coords{{"lat", "latitude", "degrees_north", layout.station_kind + " latitude (WGS 84)"},
                                 {"lon", "longitude", "degrees_east", layout.station_kind + " longitude (WGS 84)"},
                                 {"alt", "altitude", "m", layout.altitude_long_name}};
  for (Coordinate& c : coords) {
    c.id = file.define(c.name, NC_DOUBLE, {station_dim});
    file.text(c.id, "standard_name", c.standard_name);
    file.text(c.id, "units", c.units);
    file.text(c.id, "long_name", c.long_name);
  }
  file.text(coords[2].id, "positive", "up");
  file.text(coords[2].id, "axis", "Z");

  std::vector<int> static_vars;
  for (const StaticAttributeInfo& info : layout.statics) {
    const int v = file.define(info.name, NC_DOUBLE, {station_dim});
    file.text(v, "units", info.units);
    file.text(v, "long_name", info.long_name);
    file.text(v, "coordinates", coordinates);
    static_vars.push_back(v);
  }

  std::vector<int> data_vars;
  const std::size_t chunks[2] = {1, times};
  for (std::size_t k = 0; k < panel.variable_count(); ++k) {
    const libseq::data::VariableInfo& info = panel.variables()[k];
    const VariableEncoding& encoding = layout.encodings[k];
    const bool packed = encoding.int16_packing.has_value();
    const int v = file.define(info.name, packed ? NC_SHORT : NC_FLOAT, {station_dim, time_dim});
    file.check(nc_def_var_chunking(nc, v, NC_CHUNKED, chunks), "set chunking of " + info.name);
    file.check(nc_def_var_deflate(nc, v, 1, 1, 4), "set deflate of " + info.name);
    if (packed) {
      const short fill = Int16Packing::fill_value;
      file.check(nc_put_att_short(nc, v, "_FillValue", NC_SHORT, 1, &fill), "write _FillValue of " + info.name);
      const float scale = encoding.int16_packing->scale_factor;
      const float offset = encoding.int16_packing->add_offset;
      file.check(nc_put_att_float(nc, v, "scale_factor", NC_FLOAT, 1, &scale), "write scale_factor");
      file.check(nc_put_att_float(nc, v, "add_offset", NC_FLOAT, 1, &offset), "write add_offset");
    } else {
      const float fill = -9999.0f;
      file.check(nc_put_att_float(nc, v, "_FillValue", NC_FLOAT, 1, &fill), "write _FillValue of " + info.name);
    }
    if (!info.standard_name.empty()) {
      file.text(v, "standard_name", info.standard_name);
    }
    file.text(v, "long_name", info.long_name);
    file.text(v, "units", info.units);
    if (!encoding.cell_methods.empty()) {
      file.text(v, "cell_methods", encoding.cell_methods);
    }
    file.text(v, "coordinates", coordinates);
    data_vars.push_back(v);
  }
  file.check(nc_enddef(nc), "leave define mode");

  // Data.
  const std::int64_t per_step = panel.axis().step_seconds() / layout.time_unit_seconds;
  std::vector<int> time_values(times);
  std::vector<int> bounds(2 * times);
  for (std::size_t t = 0; t < times; ++t) {
    time_values[t] = static_cast<int>(static_cast<std::int64_t>(t) * per_step);
    bounds[2 * t] = time_values[t];
    bounds[2 * t + 1] = time_values[t] + static_cast<int>(per_step);
  }
  file.check(nc_put_var_int(nc, time_var, time_values.data()), "write time");
  file.check(nc_put_var_int(nc, bounds_var, bounds.data()), "write time_bnds");

  std::vector<const char*> ids, names;
  for (const libseq::data::SiteInfo& site : panel.sites()) {
    ids.push_back(site.id.c_str());
    names.push_back(site.name.c_str());
  }
  file.check(nc_put_var_string(nc, id_var, ids.data()), "write station_id");
  file.check(nc_put_var_string(nc, name_var, names.data()), "write station_name");

  std::vector<double> column(sites);
  auto put_column = [&](int variable, const std::string& what) {
    file.check(nc_put_var_double(nc, variable, column.data()), "write " + what);
  };
  for (std::size_t s = 0; s < sites; ++s) column[s] = panel.sites()[s].latitude;
  put_column(coords[0].id, "lat");
  for (std::size_t s = 0; s < sites; ++s) column[s] = panel.sites()[s].longitude;
  put_column(coords[1].id, "lon");
  for (std::size_t s = 0; s < sites; ++s) column[s] = panel.sites()[s].elevation;
  put_column(coords[2].id, "alt");
  for (std::size_t a = 0; a < layout.statics.size(); ++a) {
    for (std::size_t s = 0; s < sites; ++s) column[s] = site_attribute(panel.sites()[s], layout.statics[a].name);
    put_column(static_vars[a], layout.statics[a].name);
  }

  for (std::size_t k = 0; k < panel.variable_count(); ++k) {
    const std::vector<float> block = site_time_block(panel, k);
    const std::string& name = panel.variables()[k].name;
    if (const auto& packing = layout.encodings[k].int16_packing) {
      std::vector<short> counts(block.size());
      std::transform(block.begin(), block.end(), counts.begin(), [&](float v) { return packing->pack(v); });
      file.check(nc_put_var_short(nc, data_vars[k], counts.data()), "write " + name);
    } else {
      std::vector<float> values(block);
      std::replace_if(values.begin(), values.end(), [](float v) { return !std::isfinite(v); }, -9999.0f);
      file.check(nc_put_var_float(nc, data_vars[k], values.data()), "write " + name);
    }
  }
  file.close();
  target.commit();
}

// --- HDF5 ------------------------------------------------------------------------------------------------------------

namespace {

/// Owner of one HDF5 identifier, closed with the matching H5?close on scope exit.
class Handle {
 public:
  using Closer = herr_t (*)(hid_t);
  Handle(hid_t id, Closer closer, const std::string& what, const std::string& path) : id_(id), closer_(closer) {
    if (id_ < 0) {
      throw libseq::IoError("HDF5 file " + path + ": cannot " + what);
    }
  }
  Handle(Handle&& other) noexcept : id_(other.id_), closer_(other.closer_) { other.id_ = -1; }
  Handle(const Handle&) = delete;
  Handle& operator=(const Handle&) = delete;
  Handle& operator=(Handle&&) = delete;
  ~Handle() {
    if (id_ >= 0) closer_(id_);
  }
  hid_t get() const { return id_; }

 private:
  hid_t id_;
  Closer closer_;
};

class Hdf5Writer {
 public:
  explicit Hdf5Writer(const fs::path& path) : path_(path.string()) {
    // Errors are reported by the exceptions below; HDF5's own stack print would only duplicate them.
    H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
    file_.emplace(H5Fcreate(path_.c_str(), H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT), &H5Fclose, "create file",
                  path_);
    string_type_.emplace(H5Tcopy(H5T_C_S1), &H5Tclose, "copy string type", path_);
    check(H5Tset_size(string_type_->get(), H5T_VARIABLE), "make string type variable-length");
    check(H5Tset_cset(string_type_->get(), H5T_CSET_UTF8), "make string type UTF-8");
  }
  hid_t file() const { return file_->get(); }

  void check(herr_t status, const std::string& what) const {
    if (status < 0) {
      throw libseq::IoError("HDF5 file " + path_ + ": cannot " + what);
    }
  }
  /// Creation properties without object modification times, so that the same panel gives the same bytes.
  Handle untimed(hid_t property_class, const std::string& name) const {
    Handle properties(H5Pcreate(property_class), &H5Pclose, "create properties of " + name, path_);
    check(H5Pset_obj_track_times(properties.get(), false), "switch off time tracking of " + name);
    return properties;
  }
  void group(const std::string& name) const {
    const Handle properties = untimed(H5P_GROUP_CREATE, name);
    Handle g(H5Gcreate2(file(), name.c_str(), H5P_DEFAULT, properties.get(), H5P_DEFAULT), &H5Gclose,
             "create group " + name, path_);
  }
  void string_attribute(hid_t object, const std::string& name, const std::string& value) const {
    Handle space(H5Screate(H5S_SCALAR), &H5Sclose, "create scalar space", path_);
    Handle attribute(H5Acreate2(object, name.c_str(), string_type_->get(), space.get(), H5P_DEFAULT, H5P_DEFAULT),
                     &H5Aclose, "create attribute " + name, path_);
    const char* text = value.c_str();
    check(H5Awrite(attribute.get(), string_type_->get(), &text), "write attribute " + name);
  }
  void int_attribute(hid_t object, const std::string& name, int value) const {
    Handle space(H5Screate(H5S_SCALAR), &H5Sclose, "create scalar space", path_);
    Handle attribute(H5Acreate2(object, name.c_str(), H5T_STD_I32LE, space.get(), H5P_DEFAULT, H5P_DEFAULT),
                     &H5Aclose, "create attribute " + name, path_);
    check(H5Awrite(attribute.get(), H5T_NATIVE_INT, &value), "write attribute " + name);
  }
  void strings(const std::string& name, const std::vector<std::string>& values) const {
    std::vector<const char*> pointers;
    for (const std::string& v : values) pointers.push_back(v.c_str());
    const hsize_t size = values.size();
    Handle space(H5Screate_simple(1, &size, nullptr), &H5Sclose, "create space of " + name, path_);
    Handle data(H5Dcreate2(file(), name.c_str(), string_type_->get(), space.get(), H5P_DEFAULT,
                           untimed(H5P_DATASET_CREATE, name).get(), H5P_DEFAULT),
                &H5Dclose, "create dataset " + name, path_);
    check(H5Dwrite(data.get(), string_type_->get(), H5S_ALL, H5S_ALL, H5P_DEFAULT, pointers.data()),
          "write dataset " + name);
  }
  void doubles(const std::string& name, const std::vector<double>& values) const {
    const hsize_t size = values.size();
    Handle space(H5Screate_simple(1, &size, nullptr), &H5Sclose, "create space of " + name, path_);
    Handle data(H5Dcreate2(file(), name.c_str(), H5T_IEEE_F64LE, space.get(), H5P_DEFAULT,
                           untimed(H5P_DATASET_CREATE, name).get(), H5P_DEFAULT),
                &H5Dclose, "create dataset " + name, path_);
    check(H5Dwrite(data.get(), H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, values.data()),
          "write dataset " + name);
  }
  void times(const std::string& name, const std::vector<std::int64_t>& values, const std::string& units) const {
    const hsize_t size = values.size();
    Handle space(H5Screate_simple(1, &size, nullptr), &H5Sclose, "create space of " + name, path_);
    Handle data(H5Dcreate2(file(), name.c_str(), H5T_STD_I64LE, space.get(), H5P_DEFAULT,
                           untimed(H5P_DATASET_CREATE, name).get(), H5P_DEFAULT),
                &H5Dclose, "create dataset " + name, path_);
    check(H5Dwrite(data.get(), H5T_NATIVE_INT64, H5S_ALL, H5S_ALL, H5P_DEFAULT, values.data()),
          "write dataset " + name);
    string_attribute(data.get(), "units", units);
  }
  /// float32 [site, time], chunked one site per chunk, shuffle + deflate 4, NaN fill.
  void matrix(const std::string& name, const std::vector<float>& values, hsize_t rows, hsize_t columns,
              const libseq::data::VariableInfo& info) const {
    const hsize_t dims[2] = {rows, columns};
    Handle space(H5Screate_simple(2, dims, nullptr), &H5Sclose, "create space of " + name, path_);
    const Handle properties = untimed(H5P_DATASET_CREATE, name);
    const hsize_t chunk[2] = {1, columns};
    const float fill = std::numeric_limits<float>::quiet_NaN();
    check(H5Pset_chunk(properties.get(), 2, chunk), "set chunks of " + name);
    check(H5Pset_shuffle(properties.get()), "set shuffle of " + name);
    check(H5Pset_deflate(properties.get(), 4), "set deflate of " + name);
    check(H5Pset_fill_value(properties.get(), H5T_NATIVE_FLOAT, &fill), "set fill of " + name);
    Handle data(H5Dcreate2(file(), name.c_str(), H5T_IEEE_F32LE, space.get(), H5P_DEFAULT, properties.get(),
                           H5P_DEFAULT),
                &H5Dclose, "create dataset " + name, path_);
    check(H5Dwrite(data.get(), H5T_NATIVE_FLOAT, H5S_ALL, H5S_ALL, H5P_DEFAULT, values.data()),
          "write dataset " + name);
    string_attribute(data.get(), "units", info.units);
    string_attribute(data.get(), "standard_name", info.standard_name);
    string_attribute(data.get(), "long_name", info.long_name);
  }

 private:
  std::string path_;
  std::optional<Handle> file_;
  std::optional<Handle> string_type_;
};

}  // namespace

void write_panel_hdf5(const Panel& panel, const std::vector<StaticAttributeInfo>& statics, const std::string& title,
                      const std::string& history, const fs::path& path) {
  TemporaryTarget target(path);
  {
    Hdf5Writer h5(target.temporary());
    const hid_t root = h5.file();
    h5.string_attribute(root, "runnel_layout", "panel");
    h5.int_attribute(root, "runnel_layout_version", 1);
    h5.string_attribute(root, "title", title);
    h5.string_attribute(root, "history", history);
    h5.string_attribute(root, "comment",
                        "INVENTED DATA: fictional places and synthetic values made by a program; not measurements.");

    std::vector<std::int64_t> seconds(panel.time_count());
    for (std::size_t t = 0; t < seconds.size(); ++t) seconds[t] = panel.axis().time_at(t);
    h5.times("/time", seconds, "seconds since 1970-01-01T00:00:00Z");

    h5.group("/sites");
    h5.group("/sites/attributes");
    h5.group("/variables");
    std::vector<std::string> ids, names;
    std::vector<double> latitude, longitude, elevation;
    for (const libseq::data::SiteInfo& site : panel.sites()) {
      ids.push_back(site.id);
      names.push_back(site.name);
      latitude.push_back(site.latitude);
      longitude.push_back(site.longitude);
      elevation.push_back(site.elevation);
    }
    h5.strings("/sites/id", ids);
    h5.strings("/sites/name", names);
    h5.doubles("/sites/latitude", latitude);
    h5.doubles("/sites/longitude", longitude);
    h5.doubles("/sites/elevation", elevation);
    for (const StaticAttributeInfo& info : statics) {
      std::vector<double> column;
      for (const libseq::data::SiteInfo& site : panel.sites()) column.push_back(site_attribute(site, info.name));
      h5.doubles("/sites/attributes/" + info.name, column);
    }
    for (std::size_t k = 0; k < panel.variable_count(); ++k) {
      const libseq::data::VariableInfo& info = panel.variables()[k];
      h5.matrix("/variables/" + info.name, site_time_block(panel, k), panel.site_count(), panel.time_count(), info);
    }
  }  // every handle, the file last, is closed here, before the rename
  target.commit();
}

// --- CSV -------------------------------------------------------------------------------------------------------------

void write_site_csv(const Panel& panel, std::size_t site, const std::vector<int>& decimals, const fs::path& path) {
  if (site >= panel.site_count() || decimals.size() != panel.variable_count()) {
    throw libseq::ConfigError("CSV " + path.string() + ": site " + std::to_string(site) + " of " +
                              std::to_string(panel.site_count()) + " and " + std::to_string(decimals.size()) +
                              " decimals given, expected a valid site and one decimals entry per variable");
  }
  TemporaryTarget target(path);
  {
    std::ofstream out(target.temporary(), std::ios::binary);
    if (!out) {
      throw libseq::IoError("cannot create " + target.temporary().string());
    }
    const libseq::data::SiteInfo& info = panel.sites()[site];
    char buffer[64];
    auto number = [&](double value, int digits) {
      std::snprintf(buffer, sizeof buffer, "%.*f", digits, value);
      return std::string(buffer);
    };
    out << "# site_id: " << info.id << '\n'
        << "# name: " << info.name << '\n'
        << "# latitude: " << number(info.latitude, 4) << '\n'
        << "# longitude: " << number(info.longitude, 4) << '\n'
        << "# elevation: " << number(info.elevation, 1) << '\n';
    for (const libseq::data::VariableInfo& variable : panel.variables()) {
      out << "# units " << variable.name << ": " << variable.units << '\n';
    }
    out << "time";
    for (const libseq::data::VariableInfo& variable : panel.variables()) out << ',' << variable.name;
    out << '\n';
    for (std::size_t t = 0; t < panel.time_count(); ++t) {
      out << libseq::data::format_iso8601(panel.axis().time_at(t));
      for (std::size_t k = 0; k < panel.variable_count(); ++k) {
        out << ',';
        const float value = panel.at(site, t, k);
        if (std::isfinite(value)) out << number(value, decimals[k]);
      }
      out << '\n';
    }
    out.flush();
    if (!out) {
      throw libseq::IoError("cannot write " + target.temporary().string() + " (disk full?)");
    }
  }
  target.commit();
}

}  // namespace runnel_demo
